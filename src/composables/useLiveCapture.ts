/**
 * The bench's capture engine: open a capture (or continue one after a reload), read the link,
 * number and time every reading, show it live, keep it in the pending store until the server
 * acknowledges it, and on stop drain the uploader and finish the capture. Nothing is lost if the
 * network or server drops: the uploader resends with backoff and the server ignores seqs it
 * already holds. The engine holds no component state: the bench keeps one in a Pinia store
 * (src/stores/benchCapture.ts) so a capture runs on while the operator looks at other pages.
 * The backlog left by an earlier session is src/api/backlog.ts; planning helpers are
 * src/utils/benchPlanning.ts (both re-exported here for older imports).
 */
import { onBeforeUnmount, reactive } from 'vue';
import {
  createCapture,
  finishCapture,
  postReadings,
  refusedReadingIndex,
  type Capture,
} from '../api/captures';
import { ReadingUploader, type PendingStore, type UploaderState } from '../api/uploader';
import { LIVE_HANDOVER_MS } from '../api/liveTiming';
import type { LiveSocket } from '../api/socket';
import { readingsTransport } from '../api/readingsTransport';
import {
  defaultPendingStore,
  isPermanentRefusal,
  readingsText,
  resumeBacklog,
  type ResumeOutcome,
} from '../api/backlog';
import { readLink } from '../links/linkReader';
import { serialOptions, type SerialLink } from '../links/SerialLink';
import type { CaptureCreate, ReadingIn } from '../../shared/protocol/captures';
import type { LinkProfile } from '../../shared/protocol/linkProfile';
import type { LiveSeries } from './useLiveSeries';
import type { CaptureTarget } from '../utils/benchPlanning';

export { defaultPendingStore, isPermanentRefusal, type ResumeOutcome } from '../api/backlog';
export {
  buildProfile,
  isAccelerometer,
  simulatorPresetFor,
  type CaptureTarget,
  type ProfileChoice,
  type SimulatorPreset,
} from '../utils/benchPlanning';

export type CapturePhase = 'idle' | 'connecting' | 'capturing' | 'finishing' | 'finished' | 'error';

export interface CapturePlan {
  create: CaptureCreate;
  profile: LinkProfile;
  /** A link not yet opened (Web Serial's must come from a click: request it before calling start). */
  link: SerialLink;
  /** Simulated seconds per wall second (1 for real instruments): readings' t is capture time. */
  timeFactor: number;
  target: CaptureTarget;
  /**
   * Time readings by the instrument's own pace instead of the host clock: t = line index × this
   * many seconds. Used for the simulator, whose accelerated readings arrive in bursts.
   */
  pacedGate?: number;
  /**
   * Continue a capture that is still open on the server (after a reload): no new capture is
   * opened; seqs go on from `seqBase` and capture time from `tBase`.
   */
  resume?: { capture: Capture; seqBase: number; tBase: number };
}

export interface LiveCaptureState {
  phase: CapturePhase;
  capture: Capture | null;
  error: string | null;
  /** Why reading stopped when the link dropped (the capture can still be finished). */
  linkLost: string | null;
  /** Readings taken from the link. */
  taken: number;
  upload: UploaderState;
  /** Capture time of the newest reading, s. */
  elapsed: number;
  garbled: number;
  timeouts: number;
  lastIssue: string | null;
  /** Readings per wall second over the last few seconds. */
  rate: number;
  /** Pending readings when finishing began (for the drain progress). */
  drainFrom: number;
}

const EMPTY_UPLOAD: UploaderState = {
  pending: 0,
  sent: 0,
  duplicates: 0,
  failures: 0,
  offline: false,
  storeErrors: 0,
  held: 0,
  refused: 0,
  lost: 0,
};

/** The state before any reading: on creation (idle) and again when a capture starts (connecting). */
function freshState(phase: CapturePhase): LiveCaptureState {
  return {
    phase,
    capture: null,
    error: null,
    linkLost: null,
    taken: 0,
    upload: { ...EMPTY_UPLOAD },
    elapsed: 0,
    garbled: 0,
    timeouts: 0,
    lastIssue: null,
    rate: 0,
    drainFrom: 0,
  };
}

function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}

export interface LiveCaptureOptions {
  series: LiveSeries;
  store?: PendingStore;
  /** How often buffered readings are handed to the uploader (ms). */
  flushMs?: number;
  /**
   * Opens the live socket a capture uploads on (src/api/readingsTransport.ts: batches go as frames
   * on it while it is open, by HTTP otherwise). Without it every batch goes by HTTP.
   */
  openSocket?: () => LiveSocket;
}

export function createLiveCapture(opts: LiveCaptureOptions) {
  const store = opts.store ?? defaultPendingStore();
  const state = reactive<LiveCaptureState>(freshState('idle'));

  let link: SerialLink | null = null;
  let abort: AbortController | null = null;
  let uploader: ReadingUploader | null = null;
  /** The socket this capture's readings travel on while it is open (closed once drained). */
  let socket: LiveSocket | null = null;
  function closeSocket() {
    socket?.close();
    socket = null;
  }
  let reading: Promise<void> | null = null;
  let buffer: ReadingIn[] = [];
  let flushTimer: ReturnType<typeof setInterval> | null = null;
  let stopping: Promise<Capture | null> | null = null;
  let rateMarks: Array<[number, number]> = [];
  let adding: Promise<void> = Promise.resolve();
  /** Readings the uploader could not take at all (a guard: `add` keeps them in memory if the store fails). */
  let unkept = 0;
  let unkeptReason = '';

  /** Readings flushed to the uploader's chain but not yet handed to it. */
  let queued = 0;
  function showUpload(s: UploaderState) {
    state.upload = queued ? { ...s, pending: s.pending + queued } : s;
  }

  function flush() {
    if (!uploader || buffer.length === 0) return;
    const batch = buffer;
    const u = uploader;
    buffer = [];
    // Readings waiting in this chain count as waiting in the footer too (the store may lag at
    // 1,000 readings/s): `queued` until handed to the uploader, its own `pending` after.
    queued += batch.length;
    showUpload(u.snapshot());
    // Chained, so stop() can wait until every batch is in the store before waiting for the drain.
    adding = adding
      .then(() => {
        queued -= batch.length;
        return u.add(batch);
      })
      .catch((err) => {
        unkept += batch.length;
        unkeptReason = errorText(err);
        state.error = `Readings could not be kept for sending: ${unkeptReason}`;
      });
    const now = performance.now();
    publishNow();
    rateMarks.push([now, state.taken]);
    while (rateMarks.length > 2 && now - rateMarks[0][0] > 3000) rateMarks.shift();
    const [t0, n0] = rateMarks[0];
    state.rate = now > t0 ? ((state.taken - n0) * 1000) / (now - t0) : 0;
  }

  function reached(plan: CapturePlan, at: { taken: number; elapsed: number } = state): boolean {
    const t = plan.target;
    if (t.kind === 'duration') return at.elapsed >= t.seconds;
    if (t.kind === 'count') return at.taken >= t.n;
    return false;
  }

  /** The newest reading's counts, ahead of `state` by at most one animation frame. */
  const live = { taken: 0, elapsed: 0 };
  let publishing: number | null = null;
  const nextFrame =
    typeof requestAnimationFrame === 'function'
      ? (cb: () => void) => requestAnimationFrame(cb)
      : (cb: () => void) => setTimeout(cb, 16) as unknown as number;
  function publishNow() {
    publishing = null;
    if (state.taken !== live.taken) state.taken = live.taken;
    if (state.elapsed !== live.elapsed) state.elapsed = live.elapsed;
  }
  function publishSoon() {
    if (publishing === null) publishing = nextFrame(publishNow);
  }

  async function readLoop(plan: CapturePlan, l: SerialLink, signal: AbortSignal) {
    const factor = plan.timeFactor > 0 ? plan.timeFactor : 1;
    const seqBase = plan.resume?.seqBase ?? 0;
    const tBase = plan.resume?.tBase ?? 0;
    live.taken = state.taken;
    live.elapsed = state.elapsed;
    try {
      for await (const r of readLink(l, {
        profile: plan.profile,
        signal,
        now: () => performance.now() * factor,
        onIssue: (issue) => {
          if (issue.kind === 'garbled' || issue.kind === 'device-error') {
            state.garbled++;
            opts.series.ring.flagged++;
          } else if (issue.kind === 'timeout') state.timeouts++;
          state.lastIssue = `${issue.kind}: ${issue.message}`;
        },
      })) {
        const lines = r.seq + state.garbled + (plan.profile.mode === 'query' ? state.timeouts : 0);
        const t = tBase + (plan.pacedGate ? lines * plan.pacedGate : r.t);
        const seq = seqBase + r.seq;
        opts.series.push(t, r.value, 0);
        buffer.push(
          r.flags ? { seq, t, value: r.value, flags: r.flags } : { seq, t, value: r.value },
        );
        // The counts go to the reactive state once per animation frame, not per reading: at
        // 1,000 readings/s a write per reading re-rendered the bench's footer a thousand times
        // a second (issue 15, the chart's frame times).
        live.taken = seq + 1;
        live.elapsed = t;
        publishSoon();
        if (reached(plan, live)) {
          void stop();
          break;
        }
      }
    } catch (err) {
      if (!signal.aborted) state.linkLost = errorText(err);
    } finally {
      publishNow();
    }
  }

  /** Opens the capture and the link, then reads until stopped, the target is reached or the link drops. */
  async function start(plan: CapturePlan): Promise<void> {
    if (state.phase === 'connecting' || state.phase === 'capturing' || state.phase === 'finishing')
      return;
    Object.assign(state, freshState('connecting'));
    opts.series.clear();
    stopping = null;
    rateMarks = [];
    buffer = [];
    unkept = 0;
    unkeptReason = '';
    let capture: Capture;
    try {
      capture = plan.resume ? plan.resume.capture : await createCapture(plan.create);
      if (plan.resume) state.taken = plan.resume.seqBase;
    } catch (err) {
      state.phase = 'error';
      state.error = `The capture could not be opened: ${errorText(err)}`;
      return;
    }
    state.capture = capture;
    try {
      await plan.link.open(serialOptions(plan.profile.serial));
    } catch (err) {
      state.phase = 'error';
      state.error = `The link did not open: ${errorText(err)}. Capture ${capture.id} stays open with no readings.`;
      return;
    }
    link = plan.link;
    link.ondisconnect = (reason) => {
      state.linkLost = reason;
    };
    closeSocket();
    socket = opts.openSocket?.() ?? null;
    uploader = new ReadingUploader(capture.id, {
      store,
      send: readingsTransport({
        socket: () => socket,
        http: (id, readings, signal, encoding) => postReadings(id, readings, { signal, encoding }),
      }),
      isPermanent: isPermanentRefusal,
      refusedReading: refusedReadingIndex,
      onState: showUpload,
    });
    abort = new AbortController();
    state.phase = 'capturing';
    flushTimer = setInterval(flush, opts.flushMs ?? LIVE_HANDOVER_MS);
    reading = readLoop(plan, link, abort.signal);
  }

  async function stopInner(): Promise<Capture | null> {
    abort?.abort();
    await reading;
    reading = null;
    if (flushTimer) clearInterval(flushTimer);
    flushTimer = null;
    try {
      await link?.close();
    } catch {
      // already gone
    }
    link = null;
    if (!uploader || !state.capture) {
      if (state.phase !== 'error') state.phase = 'idle';
      return null;
    }
    state.phase = 'finishing';
    flush();
    await adding;
    state.drainFrom = uploader.snapshot().pending;
    await uploader.drained();
    const up = uploader.snapshot();
    state.upload = up;
    uploader.close();
    uploader = null;
    closeSocket();
    opts.series.refreshStats();
    const lost = up.lost + unkept;
    if (lost > 0) {
      // Finishing would close the capture without them: leave it open and say so.
      state.phase = 'error';
      state.error =
        `${readingsText(lost)} could not be kept for sending (${up.lostReason ?? unkeptReason}), ` +
        `so capture ${state.capture.id} was not finished and stays open.`;
      return null;
    }
    if (up.stopped) {
      state.phase = 'error';
      state.error = `The server refused readings: ${up.stopped}`;
      return null;
    }
    try {
      const finished = await finishCapture(state.capture.id);
      state.capture = finished;
      state.phase = 'finished';
      return finished;
    } catch (err) {
      state.phase = 'error';
      state.error = `The capture could not be finished: ${errorText(err)}`;
      return null;
    }
  }

  /** Stops reading, closes the link, waits for every reading to be acknowledged, finishes the capture. */
  function stop(): Promise<Capture | null> {
    stopping ??= stopInner();
    return stopping;
  }

  /** Back to the setup form after a finished or failed capture. */
  function reset(): void {
    if (state.phase === 'capturing' || state.phase === 'connecting' || state.phase === 'finishing')
      return;
    state.phase = 'idle';
    state.capture = null;
    state.error = null;
    state.linkLost = null;
    opts.series.clear();
  }

  /**
   * Sends what an earlier session left in the pending store (a reload or crash mid-capture).
   * Resolves with the captures and how many readings each had waiting; `onDone` says how each ended.
   */
  async function resumePending(
    onDone?: (captureId: number, up: UploaderState, outcome: ResumeOutcome) => void,
  ): Promise<Array<{ captureId: number; pending: number }>> {
    const list = await resumeBacklog(store, onDone);
    return list.map(({ captureId, pending }) => ({ captureId, pending }));
  }

  /** Abandons reading without finishing (page left mid-capture: the pending store keeps the rest). */
  function dispose(): void {
    abort?.abort();
    if (flushTimer) clearInterval(flushTimer);
    flush();
    // Batches awaiting an answer on the socket are rejected; the uploader resends them by HTTP.
    closeSocket();
    void link?.close().catch(() => {});
  }

  return { state, start, stop, reset, resumePending, dispose };
}

export type LiveCapture = ReturnType<typeof createLiveCapture>;

/** {@link createLiveCapture} bound to the component's lifetime. */
export function useLiveCapture(opts: LiveCaptureOptions): LiveCapture {
  const c = createLiveCapture(opts);
  onBeforeUnmount(c.dispose);
  return c;
}
