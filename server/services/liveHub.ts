import type { LiveReading } from '../../shared/protocol/live.js';
import type { CaptureState } from '../../shared/protocol/captureLifecycle.js';

/**
 * What services need from the live fan-out. Declared beside the services, and implemented by
 * `server/ws/live.ts`, so services never import the socket layer (which imports services).
 */
export interface LiveHub {
  hasWatchers(captureId: number): boolean;
  publishReadings(captureId: number, readings: LiveReading[]): void;
  publishState(captureId: number, state: CaptureState): void;
}

/** A hub for when nobody can watch (scripts, Supertest). */
export const silentHub: LiveHub = {
  hasWatchers: () => false,
  publishReadings: () => {},
  publishState: () => {},
};
