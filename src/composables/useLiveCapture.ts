/**
 * The bench's capture engine: open a capture, read the link, number and time every reading,
 * show it live, keep it in the pending store until the server acknowledges it, and on stop
 * drain the uploader and finish the capture. Nothing is lost if the network or server drops:
 * the uploader resends with backoff and the server ignores seqs it already holds.
 */
import { onBeforeUnmount, reactive } from 'vue';
import { ApiError } from '../api/http';
import { createCapture, finishCapture, postReadings, refusedReadingIndex, type Capture } from '../api/captures';
import { MemoryPendingStore, ReadingUploader, type PendingStore, type UploaderState } from '../api/uploader';
import { IndexedDbPendingStore } from '../api/indexedDbStore';
import { readLink } from '../links/linkReader';
import { serialOptions, type SerialLink } from '../links/SerialLink';
import type { CaptureCreate, ReadingIn } from '../../shared/protocol/captures';
import { linkPreset, type LinkPreset, type LinkProfile } from '../../shared/protocol/linkProfile';
import type { LiveSeries } from './useLiveSeries';
import { groupDigits } from '../utils/format';

export type CapturePhase = 'idle' | 'connecting' | 'capturing' | 'finishing' | 'finished' | 'error';

export type CaptureTarget = { kind: 'duration'; seconds: number } | { kind: 'count'; n: number } | { kind: 'none' };

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

const EMPTY_UPLOAD: UploaderState = { pending: 0, sent: 0, duplicates: 0, failures: 0, offline: false, storeErrors: 0, held: 0, refused: 0, lost: 0 };

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

/** 400, 403, 404, 409: the server will never take these readings, so retrying is pointless. */
export function isPermanentRefusal(err: unknown): boolean {
  return err instanceof ApiError && [400, 403, 404, 409].includes(err.status);
}

/**
 * How a backlog left by an earlier session ended: all on the server, discarded because the
 * server will never take it (capture gone or finished), or still kept in this browser.
 */
export interface ResumeOutcome {
  kind: 'sent' | 'discarded' | 'kept';
  message: string;
}

function readingsText(n: number): string {
  return n === 1 ? '1 reading' : `${groupDigits(n)} readings`;
}

/** IndexedDB when the browser has it (survives a reload), memory otherwise. */
export function defaultPendingStore(): PendingStore {
  try {
    if (typeof indexedDB !== 'undefined' && indexedDB) return new IndexedDbPendingStore();
  } catch {
    // IndexedDB blocked (private mode in some browsers)
  }
  return new MemoryPendingStore();
}

function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}

export interface LiveCaptureOptions {
  series: LiveSeries;
  store?: PendingStore;
  /** How often buffered readings are handed to the uploader (ms). */
  flushMs?: number;
}

export function createLiveCapture(opts: LiveCaptureOptions) {
  const store = opts.store ?? defaultPendingStore();
  const state = reactive<LiveCaptureState>(freshState('idle'));

  let link: SerialLink | null = null;
  let abort: AbortController | null = null;
  let uploader: ReadingUploader | null = null;
  let reading: Promise<void> | null = null;
  let buffer: ReadingIn[] = [];
  let flushTimer: ReturnType<typeof setInterval> | null = null;
  let stopping: Promise<Capture | null> | null = null;
  let rateMarks: Array<[number, number]> = [];
  let adding: Promise<void> = Promise.resolve();
  /** Readings the uploader could not take at all (a guard: `add` keeps them in memory if the store fails). */
  let unkept = 0;
  let unkeptReason = '';

  function flush() {
    if (!uploader || buffer.length === 0) return;
    const batch = buffer;
    const u = uploader;
    buffer = [];
    // Chained, so stop() can wait until every batch is in the store before waiting for the drain.
    adding = adding
      .then(() => u.add(batch))
      .catch((err) => {
        unkept += batch.length;
        unkeptReason = errorText(err);
        state.error = `Readings could not be kept for sending: ${unkeptReason}`;
      });
    const now = performance.now();
    rateMarks.push([now, state.taken]);
    while (rateMarks.length > 2 && now - rateMarks[0][0] > 3000) rateMarks.shift();
    const [t0, n0] = rateMarks[0];
    state.rate = now > t0 ? ((state.taken - n0) * 1000) / (now - t0) : 0;
  }

  function reached(plan: CapturePlan): boolean {
    const t = plan.target;
    if (t.kind === 'duration') return state.elapsed >= t.seconds;
    if (t.kind === 'count') return state.taken >= t.n;
    return false;
  }

  async function readLoop(plan: CapturePlan, l: SerialLink, signal: AbortSignal) {
    const factor = plan.timeFactor > 0 ? plan.timeFactor : 1;
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
        const t = plan.pacedGate ? lines * plan.pacedGate : r.t;
        opts.series.push(t, r.value, 0);
        buffer.push(r.flags ? { seq: r.seq, t, value: r.value, flags: r.flags } : { seq: r.seq, t, value: r.value });
        state.taken = r.seq + 1;
        state.elapsed = t;
        if (reached(plan)) {
          void stop();
          break;
        }
      }
    } catch (err) {
      if (!signal.aborted) state.linkLost = errorText(err);
    }
  }

  /** Opens the capture and the link, then reads until stopped, the target is reached or the link drops. */
  async function start(plan: CapturePlan): Promise<void> {
    if (state.phase === 'connecting' || state.phase === 'capturing' || state.phase === 'finishing') return;
    Object.assign(state, freshState('connecting'));
    opts.series.clear();
    stopping = null;
    rateMarks = [];
    buffer = [];
    unkept = 0;
    unkeptReason = '';
    let capture: Capture;
    try {
      capture = await createCapture(plan.create);
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
    uploader = new ReadingUploader(capture.id, {
      store,
      send: (id, readings, signal) => postReadings(id, readings, { signal }),
      isPermanent: isPermanentRefusal,
      refusedReading: refusedReadingIndex,
      onState: (s) => {
        state.upload = s;
      },
    });
    abort = new AbortController();
    state.phase = 'capturing';
    flushTimer = setInterval(flush, opts.flushMs ?? 200);
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
    if (state.phase === 'capturing' || state.phase === 'connecting' || state.phase === 'finishing') return;
    state.phase = 'idle';
    state.capture = null;
    state.error = null;
    state.linkLost = null;
    opts.series.clear();
  }

  /** Deletes every pending reading of a capture from the store. */
  async function discardPending(captureId: number): Promise<void> {
    for (;;) {
      const chunk = await store.take(captureId, 10_000);
      if (chunk.length === 0) return;
      await store.remove(captureId, chunk.map((r) => r.seq));
    }
  }

  /**
   * What to do with a backlog once its uploader is done. Readings are deleted only when the
   * server can never take them: the capture is gone (404) or finished (409). On 403 they stay
   * for the capture's operator (the store is shared by everyone using this browser); a single
   * bad reading (400 naming its index) was already dropped by the uploader.
   */
  async function settleBacklog(id: number, s: UploaderState, refusal: unknown): Promise<ResumeOutcome> {
    const dropped = s.refused
      ? ` ${readingsText(s.refused)} the server named as malformed ${s.refused === 1 ? 'was' : 'were'} dropped (${s.refusedReason}).`
      : '';
    if (!s.stopped) {
      return { kind: 'sent', message: `Capture ${id}: the readings left from an earlier session are now on the server.${dropped}` };
    }
    const status = refusal instanceof ApiError ? refusal.status : 0;
    const n = readingsText(s.pending);
    if (status === 404 || status === 409) {
      try {
        await discardPending(id);
      } catch (err) {
        return { kind: 'kept', message: `Capture ${id}: the server will not take ${n} left from an earlier session (${s.stopped}), and they could not be deleted from this browser: ${errorText(err)}` };
      }
      return {
        kind: 'discarded',
        message:
          status === 404
            ? `Capture ${id} no longer exists on the server: ${n} left from an earlier session were discarded.${dropped}`
            : `Capture ${id} was finished before ${n} left from an earlier session arrived: they came too late and were discarded.${dropped}`,
      };
    }
    if (status === 403) {
      return {
        kind: 'kept',
        message: `Capture ${id}: ${n} from an earlier session are waiting in this browser, but your account may not add them. The capture's operator (or a lead or admin) must sign in here to send them.`,
      };
    }
    return { kind: 'kept', message: `Capture ${id}: the server refused ${n} left from an earlier session (${s.stopped}). They are kept in this browser.${dropped}` };
  }

  /**
   * Sends what an earlier session left in the pending store (a reload or crash mid-capture).
   * Resolves with the captures and how many readings each had waiting; `onDone` says how each ended.
   */
  async function resumePending(
    onDone?: (captureId: number, up: UploaderState, outcome: ResumeOutcome) => void,
  ): Promise<Array<{ captureId: number; pending: number }>> {
    let ids: number[];
    try {
      ids = await store.captures();
    } catch {
      return [];
    }
    const out: Array<{ captureId: number; pending: number }> = [];
    for (const id of ids) {
      let pending: number;
      try {
        pending = await store.count(id);
      } catch {
        continue;
      }
      if (!pending) continue;
      out.push({ captureId: id, pending });
      let refusal: unknown = null;
      const u = new ReadingUploader(id, {
        store,
        send: (cid, r, signal) => postReadings(cid, r, { signal }),
        refusedReading: refusedReadingIndex,
        isPermanent: (err) => {
          if (!isPermanentRefusal(err)) return false;
          refusal = err;
          return true;
        },
      });
      void (async () => {
        await u.resume();
        await u.drained();
        const s = u.snapshot();
        u.close();
        onDone?.(id, s, await settleBacklog(id, s, refusal));
      })();
    }
    return out;
  }

  /** Abandons reading without finishing (page left mid-capture: the pending store keeps the rest). */
  function dispose(): void {
    abort?.abort();
    if (flushTimer) clearInterval(flushTimer);
    flush();
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

// ---- Planning a capture from the bench's choices -------------------------------------------


/** The simulator presets the counter and the SPI bridge offer. */
export type SimulatorPreset = 'xtal-16m' | 'osc-25m' | 'tf-32k' | 'tcxo-12m8' | 'accel';

const PRESET_NOMINALS: Array<[SimulatorPreset, number]> = [
  ['xtal-16m', 16e6],
  ['osc-25m', 25e6],
  ['tf-32k', 32768],
  ['tcxo-12m8', 12.8e6],
];

/** The simulator preset that plays a DUT: by its kind, else by its nominal frequency. */
export function simulatorPresetFor(dut: { kind: string; nominal: number | null }): SimulatorPreset {
  const kind = dut.kind.toLowerCase();
  if (kind.includes('accel')) return 'accel';
  if (kind.includes('tuning')) return 'tf-32k';
  if (kind.includes('tcxo')) return 'tcxo-12m8';
  if (kind.includes('osc')) return 'osc-25m';
  const f = Number(dut.nominal);
  if (Number.isFinite(f) && f > 0) {
    let best = PRESET_NOMINALS[0];
    for (const p of PRESET_NOMINALS) if (Math.abs(Math.log(p[1] / f)) < Math.abs(Math.log(best[1] / f))) best = p;
    return best[0];
  }
  return 'xtal-16m';
}

/** True when a DUT is read as acceleration (mg) rather than frequency (Hz). */
export function isAccelerometer(dut: { kind: string }): boolean {
  return dut.kind.toLowerCase().includes('accel');
}

export interface ProfileChoice {
  linkKind: 'simulator' | 'serial';
  /** The instrument's own profile (takes precedence when given) … */
  instrumentProfile?: LinkProfile | null;
  /** … else this preset. */
  presetId: LinkPreset['id'];
  mode: 'talk' | 'query';
  gateTime: number;
  accelerometer: boolean;
  simulatorPreset: SimulatorPreset;
  checkpointIndex: number;
  acceleration: number;
  orientation?: 'flat' | 'on-edge' | 'inverted' | null;
  /** Local gravity for the simulated accelerometer, m/s². */
  gravity?: number;
}

const SIM_ORIENTATION = { flat: 'flat', 'on-edge': 'edge', inverted: 'inverted' } as const;

/**
 * The link profile a capture runs with: the instrument's own profile or a preset; for the
 * simulator, the counter (talk-only or SCPI) or the SPI bridge with the DUT's preset, the
 * checkpoint's index, the gate and the time factor. Timeouts outlast one gate of wall time.
 */
export function buildProfile(c: ProfileChoice): LinkProfile {
  const factor = c.linkKind === 'simulator' && c.acceleration > 0 ? c.acceleration : 1;
  const gateWallMs = (c.gateTime * 1000) / factor;
  if (c.accelerometer) {
    const p = c.linkKind === 'serial' && c.instrumentProfile ? structuredClone(c.instrumentProfile) : linkPreset('spi-bridge');
    p.intervalMs = Math.max(1, Math.round(gateWallMs));
    if (c.linkKind === 'simulator') {
      p.kind = 'simulator';
      const params: Record<string, string> = {
        preset: 'accel',
        checkpoint: String(Math.min(3, Math.max(0, c.checkpointIndex))),
        accel: String(factor),
      };
      if (c.orientation) params.orientation = SIM_ORIENTATION[c.orientation];
      if (c.gravity && c.gravity >= 9.7 && c.gravity <= 9.9) params.gravity = c.gravity.toFixed(6);
      p.simulator = { path: '/sim/spi-bridge', params };
      p.name = 'Simulated SPI bridge';
    }
    return p;
  }
  let p: LinkProfile;
  if (c.linkKind === 'serial' && c.instrumentProfile) p = structuredClone(c.instrumentProfile);
  else if (c.linkKind === 'simulator') p = linkPreset(c.mode === 'talk' ? 'talk-counter' : 'scpi-counter');
  else p = linkPreset(c.presetId);
  p.mode = c.mode;
  if (c.mode === 'query' && !p.queryCommand.trim()) p.queryCommand = 'READ?';
  if (c.linkKind === 'simulator') {
    p.kind = 'simulator';
    p.name = `Simulated counter (${c.mode === 'talk' ? 'talk-only' : 'query'})`;
    p.simulator = {
      path: '/sim/counter',
      params: {
        mode: c.mode,
        preset: c.simulatorPreset === 'accel' ? 'xtal-16m' : c.simulatorPreset,
        checkpoint: String(Math.min(3, Math.max(0, c.checkpointIndex))),
        gate: String(c.gateTime),
        accel: String(factor),
      },
    };
  } else if (c.mode === 'query' && p.parseRule !== 'hex-spi') {
    p.initCommands = [...p.initCommands.filter((x) => !/GATE/i.test(x)), `:FREQ:GATE:TIME ${c.gateTime}`];
  }
  p.timeoutMs = Math.min(600_000, Math.max(p.timeoutMs, Math.round(gateWallMs * 3 + 1000)));
  return p;
}
