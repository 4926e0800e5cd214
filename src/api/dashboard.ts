/** The dashboard and the health line; the shapes are the contract's (shared/protocol/responses.ts). */
import { callRoute } from './http';
import type { z } from 'zod';
import type { CalibrationState } from '../../shared/protocol/equipment';
import type {
  DashboardResponse,
  HealthResponse,
  OnAirCapture,
} from '../../shared/protocol/responses';

export type { CalibrationState };
export type Dashboard = z.infer<typeof DashboardResponse>;
export type DashboardCounts = Dashboard['counts'];
/** A capture being recorded right now, with the names the panel shows. */
export type LiveCapture = OnAirCapture;
/** An instrument or reference whose calibration needs attention (the server's one rule). */
export type CalibrationItem = Dashboard['calibration'][number];
export type Health = z.infer<typeof HealthResponse>;

export function fetchDashboard(): Promise<Dashboard> {
  return callRoute('GET /api/dashboard', {});
}

export function fetchHealth(): Promise<Health> {
  return callRoute('GET /api/health', {});
}
