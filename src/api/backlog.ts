/**
 * The bench's backlog: readings kept in browser storage until the server acknowledged them
 * (DEVELOPERS.md, the ingest path). After a reload or crash mid-capture, `resumeBacklog` sends
 * what an earlier session left and says how each capture's backlog ended.
 */
import { ApiError } from './http';
import { isPermanentRefusal, postReadings, refusedReadingIndex } from './readings';
import {
  MemoryPendingStore,
  ReadingUploader,
  type PendingStore,
  type UploaderState,
} from './uploader';
import { IndexedDbPendingStore } from './indexedDbStore';
import { groupDigits } from '../utils/format';

export { isPermanentRefusal };

/**
 * How a backlog left by an earlier session ended: all on the server, discarded because the
 * server will never take it (capture gone or finished), or still kept in this browser.
 */
export interface ResumeOutcome {
  kind: 'sent' | 'discarded' | 'kept';
  message: string;
}

export function readingsText(n: number): string {
  return n === 1 ? '1 reading' : `${groupDigits(n)} readings`;
}

function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
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

/** Deletes every pending reading of a capture from the store. */
export async function discardPending(store: PendingStore, captureId: number): Promise<void> {
  for (;;) {
    const chunk = await store.take(captureId, 10_000);
    if (chunk.length === 0) return;
    await store.remove(
      captureId,
      chunk.map((r) => r.seq),
    );
  }
}

/**
 * What to do with a backlog once its uploader is done. Readings are deleted only when the
 * server can never take them: the capture is gone (404) or finished or aborted (409). On 403 they
 * stay for the capture's operator (the store is shared by everyone using this browser); a single
 * bad reading (400 naming its index) was already dropped by the uploader.
 */
export async function settleBacklog(
  store: PendingStore,
  id: number,
  s: UploaderState,
  refusal: unknown,
): Promise<ResumeOutcome> {
  const dropped = s.refused
    ? ` ${readingsText(s.refused)} the server named as malformed ${s.refused === 1 ? 'was' : 'were'} dropped (${s.refusedReason}).`
    : '';
  if (!s.stopped) {
    return {
      kind: 'sent',
      message: `Capture ${id}: the readings left from an earlier session are now on the server.${dropped}`,
    };
  }
  const status = refusal instanceof ApiError ? refusal.status : 0;
  const n = readingsText(s.pending);
  if (status === 404 || status === 409) {
    try {
      await discardPending(store, id);
    } catch (err) {
      return {
        kind: 'kept',
        message: `Capture ${id}: the server will not take ${n} left from an earlier session (${s.stopped}), and they could not be deleted from this browser: ${errorText(err)}`,
      };
    }
    return {
      kind: 'discarded',
      message:
        status === 404
          ? `Capture ${id} no longer exists on the server: ${n} left from an earlier session were discarded.${dropped}`
          : `Capture ${id} was closed before ${n} left from an earlier session arrived: they came too late and were discarded.${dropped}`,
    };
  }
  if (status === 403) {
    return {
      kind: 'kept',
      message: `Capture ${id}: ${n} from an earlier session are waiting in this browser, but your account may not add them. The capture's operator (or a lead or admin) must sign in here to send them.`,
    };
  }
  return {
    kind: 'kept',
    message: `Capture ${id}: the server refused ${n} left from an earlier session (${s.stopped}). They are kept in this browser.${dropped}`,
  };
}

/** One capture's backlog being sent: how many readings waited, and a promise of how it ended. */
export interface BacklogResume {
  captureId: number;
  pending: number;
  done: Promise<ResumeOutcome>;
}

/**
 * Sends what an earlier session left in the pending store (a reload or crash mid-capture).
 * Resolves with the captures and how many readings each had waiting; `onDone` says how each ended.
 */
export async function resumeBacklog(
  store: PendingStore,
  onDone?: (captureId: number, up: UploaderState, outcome: ResumeOutcome) => void,
): Promise<BacklogResume[]> {
  let ids: number[];
  try {
    ids = await store.captures();
  } catch {
    return [];
  }
  const out: BacklogResume[] = [];
  for (const id of ids) {
    let pending: number;
    try {
      pending = await store.count(id);
    } catch {
      continue;
    }
    if (!pending) continue;
    let refusal: unknown = null;
    const u = new ReadingUploader(id, {
      store,
      send: (cid, r, signal, encoding) => postReadings(cid, r, { signal, encoding }),
      refusedReading: refusedReadingIndex,
      isPermanent: (err) => {
        if (!isPermanentRefusal(err)) return false;
        refusal = err;
        return true;
      },
    });
    const done = (async () => {
      await u.resume();
      await u.drained();
      const s = u.snapshot();
      u.close();
      const outcome = await settleBacklog(store, id, s, refusal);
      onDone?.(id, s, outcome);
      return outcome;
    })();
    out.push({ captureId: id, pending, done });
  }
  return out;
}
