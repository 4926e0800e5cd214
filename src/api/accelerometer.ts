/**
 * Accelerometers (issue 13): the guided tilt check's stored results and the baseline a capture is
 * compared with (the same orientation for acceleration). Types come from shared/protocol.
 */
import { callRoute } from './http';
import type {
  CaptureBaseline,
  TiltCheck,
  TiltCheckBody,
} from '../../shared/protocol/accelerometer';

export type {
  CaptureBaseline,
  MatrixTiltCell,
  TiltChange,
  TiltCheck,
  TiltCheckBody,
} from '../../shared/protocol/accelerometer';

/** POST /api/duts/:id/tilt-checks: records a finished tilt check as the DUT's result at its checkpoint. */
export async function recordTiltCheck(dutId: number, body: TiltCheckBody): Promise<TiltCheck> {
  return (await callRoute('POST /api/duts/:id/tilt-checks', { id: dutId }, { body })).tiltCheck;
}

/** GET /api/duts/:id/tilt-checks: every tilt check of a DUT, oldest first. */
export async function listTiltChecks(dutId: number): Promise<TiltCheck[]> {
  return (await callRoute('GET /api/duts/:id/tilt-checks', { id: dutId })).tiltChecks;
}

/** GET /api/captures/:id/baseline: the capture this one is compared with, or why there is none. */
export function getCaptureBaseline(captureId: number): Promise<CaptureBaseline> {
  return callRoute('GET /api/captures/:id/baseline', { id: captureId });
}
