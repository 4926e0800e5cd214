/**
 * A capture's life from its page (issue 13): finish or abort an open or stalled capture.
 * The request body is the shared schema (shared/protocol/captureLifecycle.ts).
 */
import { callRoute, type RequestOptions } from './http';
import { finishCapture, type Capture } from './captures';
import type { CaptureAbort } from '../../shared/protocol/captureLifecycle';

export {
  CAPTURE_STATES,
  isRecording,
  stallAfterMs,
  type CaptureState,
} from '../../shared/protocol/captureLifecycle';
export { finishCapture };

/** Abandons an open or stalled capture with a reason: its readings are kept, it enters no verdict. */
export function abortCapture(
  id: number,
  body: CaptureAbort,
  options?: RequestOptions,
): Promise<Capture> {
  return callRoute('POST /api/captures/:id/abort', { id }, { ...options, body });
}
