import { http } from './http';

export type CalibrationState = 'ok' | 'due-soon' | 'overdue';

export interface DashboardCounts {
  studies: number;
  checkpoints: number;
  duts: number;
  instruments: number;
  references: number;
  captures: number;
  users: number;
}

/** A capture being recorded right now; the server may add fields, the panel reads these. */
export interface LiveCapture {
  id: string | number;
  dutLabel?: string;
  studyTitle?: string;
  checkpointName?: string;
  operator?: string;
  startedAt?: string;
  readings?: number;
}

export interface CalibrationItem {
  id: string | number;
  name: string;
  kind: string;
  calibrationDue: string | null;
  state: CalibrationState;
}

export interface Dashboard {
  counts: DashboardCounts;
  live: LiveCapture[];
  calibration: CalibrationItem[];
}

export interface Health {
  status: 'ok' | 'degraded';
  database: { ok: boolean; latencyMs?: number };
  version: string;
}

export function fetchDashboard(): Promise<Dashboard> {
  return http.get<Dashboard>('/api/dashboard');
}

export function fetchHealth(): Promise<Health> {
  return http.get<Health>('/api/health');
}
