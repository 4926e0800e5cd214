/**
 * Watching a capture someone else is recording: the readings stored so far, then every
 * `readings-batch` from the live socket, deduplicated and gap-filled by seq (a reconnect fetches
 * what was missed), until a `capture-state` says it finished.
 */
import { onBeforeUnmount, reactive } from 'vue';
import { getReadings, type ReadingOut } from '../api/captures';
import { openLiveSocket, type LiveSocket, type SocketState } from '../api/socket';
import type { ServerMessage } from '../../shared/protocol/live';
import { isRecording, type CaptureState } from '../../shared/protocol/captureLifecycle';
import type { LiveSeries } from './useLiveSeries';

export interface WatchState {
  /** open/stalled: on air; finished/aborted: the capture ended. */
  captureState: CaptureState;
  socket: SocketState;
  loading: boolean;
  error: string | null;
  lastSeq: number;
  /** Readings known to exist but not held (older than the history loaded). */
  skipped: number;
}

/** Most history loaded in full when watching starts; older readings count but are not drawn. */
export const WATCH_HISTORY = 100_000;
const PAGE = 20_000;

export function createWatch(opts: {
  id: number;
  series: LiveSeries;
  getToken: () => string | null;
}) {
  const state = reactive<WatchState>({
    captureState: 'open',
    socket: 'connecting',
    loading: true,
    error: null,
    lastSeq: -1,
    skipped: 0,
  });
  let socket: LiveSocket | null = null;
  let queue: ReadingOut[][] = [];
  let catchingUp: Promise<void> | null = null;
  let wasOpen = false;

  function append(readings: ReadingOut[]) {
    const fresh: ReadingOut[] = [];
    for (const r of readings) if (r.seq > state.lastSeq) fresh.push(r);
    if (!fresh.length) return;
    fresh.sort((a, b) => a.seq - b.seq);
    opts.series.pushMany(fresh);
    state.lastSeq = fresh[fresh.length - 1].seq;
  }

  async function fetchFrom(from: number, to?: number) {
    for (let start = from; to === undefined || start <= to; start += PAGE) {
      const end = to === undefined ? start + PAGE - 1 : Math.min(start + PAGE - 1, to);
      const { readings } = await getReadings(opts.id, { from: start, to: end });
      append(readings);
      if (to === undefined && readings.length === 0) break;
    }
  }

  /** Fills what is missing between our last seq and the server's, then applies queued batches. */
  function catchUp(upTo?: number): Promise<void> {
    catchingUp ??= (async () => {
      try {
        await fetchFrom(state.lastSeq + 1, upTo);
      } catch (err) {
        state.error = err instanceof Error ? err.message : String(err);
      }
      const q = queue;
      queue = [];
      for (const batch of q) append(batch);
      catchingUp = null;
    })();
    return catchingUp;
  }

  function onMessage(msg: ServerMessage) {
    if (msg.type === 'readings-batch') {
      if (state.loading || catchingUp) {
        queue.push(msg.readings);
        return;
      }
      const first = msg.readings.reduce((m, r) => Math.min(m, r.seq), Infinity);
      if (first > state.lastSeq + 1) {
        queue.push(msg.readings);
        void catchUp(first - 1);
        return;
      }
      append(msg.readings);
    } else if (msg.type === 'capture-state') {
      state.captureState = msg.state;
      if (!isRecording(msg.state)) void catchUp();
    }
  }

  /** Loads the history and, for an open capture, follows it live. */
  async function start(capture: { state: CaptureState; highestSeq: number }) {
    state.captureState = capture.state;
    // Subscribe first so nothing falls between the history and the first live batch.
    if (isRecording(capture.state)) {
      socket = openLiveSocket({
        getToken: opts.getToken,
        onState: (s) => {
          state.socket = s;
          if (s === 'open') {
            if (wasOpen && !state.loading) void catchUp();
            wasOpen = true;
          }
        },
      });
      socket.watch(opts.id, onMessage);
    } else {
      state.socket = 'closed';
    }
    try {
      const from = Math.max(0, capture.highestSeq + 1 - WATCH_HISTORY);
      state.skipped = from;
      opts.series.ring.offset = from;
      state.lastSeq = from - 1;
      await fetchFrom(from);
    } catch (err) {
      state.error = err instanceof Error ? err.message : String(err);
    }
    state.loading = false;
    const q = queue;
    queue = [];
    for (const batch of q) append(batch);
    opts.series.refreshStats();
  }

  function dispose() {
    socket?.close();
    socket = null;
  }

  return { state, start, dispose };
}

export type Watch = ReturnType<typeof createWatch>;

export function useWatch(opts: Parameters<typeof createWatch>[0]): Watch {
  const w = createWatch(opts);
  onBeforeUnmount(w.dispose);
  return w;
}
