import { computed, markRaw, ref, shallowRef, watch } from 'vue';
import { defineStore } from 'pinia';
import { getCapture, getReadings } from '../api/captures';
import { defaultPendingStore, resumeBacklog, type ResumeOutcome } from '../api/backlog';
import { createLiveCapture } from '../composables/useLiveCapture';
import { openLiveSocket } from '../api/socket';
import { createLiveSeries } from '../composables/useLiveSeries';
import { createSimulatorLink } from '../links/simulatorLink';
import { requestSerialLink } from '../links/webSerialLink';
import type { SerialLink } from '../links/SerialLink';
import type { BenchStart } from '../utils/benchPlanning';
import { groupDigits } from '../utils/format';
import { isRecording } from '../../shared/protocol/captureLifecycle';

import { ACTIVE_CAPTURE_KEY, useBenchStatusStore } from './benchStatus';
import { useSessionStore } from './session';

export { ACTIVE_CAPTURE_KEY };

/** The capture this browser was recording, as remembered across a reload. */
export interface ActiveCapture {
  captureId: number;
  request: BenchStart;
  savedAt: string;
}

function readActive(): ActiveCapture | null {
  try {
    const raw = localStorage.getItem(ACTIVE_CAPTURE_KEY);
    if (!raw) return null;
    const v = JSON.parse(raw) as ActiveCapture;
    return Number.isInteger(v?.captureId) && v.request?.create ? v : null;
  } catch {
    return null;
  }
}

function writeActive(v: ActiveCapture | null): void {
  try {
    if (v) localStorage.setItem(ACTIVE_CAPTURE_KEY, JSON.stringify(v));
    else localStorage.removeItem(ACTIVE_CAPTURE_KEY);
  } catch {
    // private mode or full storage: no resume after a reload
  }
}

function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}

function linkFor(req: BenchStart): Promise<SerialLink> | SerialLink {
  if (req.linkKind === 'serial') return requestSerialLink();
  return createSimulatorLink({
    path: req.profile.simulator!.path,
    params: req.profile.simulator!.params,
  });
}

/**
 * The bench's live capture, outside any component (issue 13, no stranded captures): the engine,
 * its live series and the request it runs live here, so leaving the bench page does not stop the
 * capture, the rail can show that one is running, and coming back shows it where it is. The
 * capture being recorded is remembered in localStorage; after a reload the bench offers to resume
 * it (the readings the earlier page had not sent go first, from the IndexedDB backlog).
 */
export const useBenchCaptureStore = defineStore('benchCapture', () => {
  const request = shallowRef<BenchStart | null>(null);
  const guided = ref(false);
  const linkError = ref<string | null>(null);
  /** What happened to readings left by an earlier session (one line per capture). */
  const backlogNotice = ref<string | null>(null);
  /** A capture recorded here before a reload, still to be resumed or let go. */
  const resumable = ref<ActiveCapture | null>(readActive());
  const resuming = ref(false);

  const pending = defaultPendingStore();
  // Kept raw: the ring buffer and the engine must not become deep reactive proxies of the store.
  const series = markRaw(
    createLiveSeries({
      nominal: () => request.value?.create.nominal ?? null,
      tau0: () => request.value?.create.gateTime ?? 1,
      frequency: () => request.value?.create.quantity === 'frequency',
    }),
  );
  const session = useSessionStore();
  // Readings travel as frames on a live socket of the capture's own while it is open (issue 15).
  const engine = createLiveCapture({
    series,
    store: pending,
    openSocket: () => openLiveSocket({ getToken: () => session.token }),
  });
  const state = engine.state;

  const running = computed(
    () =>
      state.phase === 'connecting' || state.phase === 'capturing' || state.phase === 'finishing',
  );
  const live = computed(() => state.phase !== 'idle' && !guided.value);
  const captureId = computed(() => state.capture?.id ?? null);

  // The rail reads the light status store only.
  const status = useBenchStatusStore();
  watch(
    [running, captureId, resumable],
    ([on, id, rec]) => {
      status.recording = on;
      status.captureId = id;
      status.resumableId = rec?.captureId ?? null;
    },
    { immediate: true },
  );

  // Remember the capture while it records; forget it once it is finished.
  watch(
    () => [state.phase, state.capture?.id] as const,
    ([phase, id]) => {
      if (phase === 'capturing' && id && request.value) {
        writeActive({ captureId: id, request: request.value, savedAt: new Date().toISOString() });
        resumable.value = null;
      } else if (phase === 'finished' || phase === 'idle') {
        writeActive(null);
      }
    },
  );

  // Closing or reloading the tab mid-capture asks first (the browser shows its own words).
  const onBeforeUnload = (e: BeforeUnloadEvent) => {
    e.preventDefault();
    e.returnValue = '';
  };
  watch(running, (on) => {
    if (typeof window === 'undefined') return;
    if (on) window.addEventListener('beforeunload', onBeforeUnload);
    else window.removeEventListener('beforeunload', onBeforeUnload);
  });

  const backlogs = new Map<number, Promise<ResumeOutcome>>();
  let backlogStarted: Promise<void> | null = null;
  /** Sends, once per page load, what an earlier session left in browser storage. */
  function sendBacklog(): Promise<void> {
    backlogStarted ??= (async () => {
      const list = await resumeBacklog(pending, (_id, _s, outcome) => {
        backlogNotice.value = outcome.message;
      });
      for (const b of list) backlogs.set(b.captureId, b.done);
      if (list.length) {
        backlogNotice.value = list
          .map(
            (w) =>
              `Sending ${groupDigits(w.pending)} readings of capture ${w.captureId} left from an earlier session…`,
          )
          .join(' ');
      }
    })();
    return backlogStarted;
  }

  /** Opens the link and starts a new capture (or a guided tilt check, which runs in its own panel). */
  async function begin(req: BenchStart): Promise<void> {
    linkError.value = null;
    request.value = req;
    if (req.guided) {
      guided.value = true;
      return;
    }
    let link: SerialLink;
    try {
      link = await linkFor(req);
    } catch (err) {
      linkError.value = `No link: ${errorText(err)}`;
      return;
    }
    await engine.start({
      create: req.create,
      profile: req.profile,
      link,
      timeFactor: req.timeFactor,
      target: req.target,
      pacedGate: req.linkKind === 'simulator' ? req.create.gateTime : undefined,
    });
  }

  /**
   * Continues the capture a reload interrupted: its backlog is sent first, then — if the capture
   * is still open (or stalled) — the link reopens and readings go on from the next seq and the
   * next gate after the last stored reading.
   */
  async function resume(): Promise<void> {
    const rec = resumable.value;
    if (!rec || running.value) return;
    resuming.value = true;
    linkError.value = null;
    try {
      // Web Serial's port must be asked for while the click still counts: before any waiting.
      const link = await linkFor(rec.request);
      await sendBacklog();
      await backlogs.get(rec.captureId);
      const c = await getCapture(rec.captureId);
      if (!isRecording(c.state)) {
        forget();
        backlogNotice.value = `Capture ${rec.captureId} is ${c.state} already: there is nothing to resume.`;
        return;
      }
      let tBase = 0;
      if (c.highestSeq >= 0) {
        const page = await getReadings(c.id, { from: c.highestSeq, to: c.highestSeq });
        const last = page.readings[page.readings.length - 1];
        tBase = (last?.t ?? 0) + rec.request.create.gateTime;
      }
      request.value = rec.request;
      guided.value = false;
      await engine.start({
        create: rec.request.create,
        profile: rec.request.profile,
        link,
        timeFactor: rec.request.timeFactor,
        target: rec.request.target,
        pacedGate: rec.request.linkKind === 'simulator' ? rec.request.create.gateTime : undefined,
        resume: { capture: c, seqBase: c.highestSeq + 1, tBase },
      });
    } catch (err) {
      linkError.value = `Capture ${rec.captureId} could not be resumed: ${errorText(err)}`;
    } finally {
      resuming.value = false;
    }
  }

  /** Lets go of a remembered capture (it stays open on the server: finish or abort it on its page). */
  function forget(): void {
    resumable.value = null;
    writeActive(null);
  }

  function stop() {
    return engine.stop();
  }

  /** Back to the setup form after a finished or failed capture. */
  function reset(): void {
    engine.reset();
    guided.value = false;
  }

  return {
    request,
    guided,
    linkError,
    backlogNotice,
    resumable,
    resuming,
    series,
    state,
    running,
    live,
    captureId,
    sendBacklog,
    begin,
    resume,
    forget,
    stop,
    reset,
  };
});
