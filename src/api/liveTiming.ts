/**
 * How long a reading may wait on the bench before it leaves for the server (issue 15: a watcher
 * sees a reading within 100 ms at the 95th percentile, 50 benches at 100 readings/s each).
 *
 * - `LIVE_HANDOVER_MS`: the bench's capture engine (src/composables/useLiveCapture.ts) hands the
 *   readings its link produced to the uploader this often.
 * - `UPLOADER_FLUSH_MS`: the uploader (src/api/uploader.ts) then waits at most this long for more
 *   readings before sending a batch; a batch that reaches its size limit leaves at once, and while
 *   the server is busy readings gather into the next batch, so under load batches grow instead of
 *   requests multiplying.
 *
 * Chosen with `npm run bench -- live`, which drives the uploader with these settings; shorter
 * waits cost more requests per second (about one per capture per max(handover, flush)).
 */
export const LIVE_HANDOVER_MS = 20;
export const UPLOADER_FLUSH_MS = 25;
