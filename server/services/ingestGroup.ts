import type pg from 'pg';
import { float8Array, int2Array, int4Array } from '../db/binaryArrays.js';
import { LOCKED_STATUSES } from './studyLock.js';
import type { BatchColumns } from './ingestColumns.js';

/**
 * Natural group commit of small readings batches (issue 15, live path).
 *
 * Under load every bench sends a batch of about ten readings every few tens of milliseconds; as
 * one statement each, that is hundreds of commits and tile-trigger runs a second. Here the small
 * batches of all captures wait in one queue per pool, and a drainer writes everything queued (up
 * to {@link GROUP_MAX_READINGS}) with ONE statement — one round trip, one commit, one run of the
 * tile trigger. There is no timer: a batch that finds nothing in flight leaves at once (alone, by
 * the caller's own one-capture statement), and batches arriving while groups are in flight gather
 * for the next group, which leaves the moment a slot frees. So the busier the server, the larger
 * the groups, and an idle server answers as fast as before.
 *
 * Each request still gets the answer it would get as its own statement: the statement reports
 * per request the capture's state, writer, study and counters, and the caller turns them into
 * the same 404/403/409 answers. Two requests of one capture in a group behave like two
 * statements in order (the earlier request's readings win a seq both carry; each is counted
 * apart); a capture never sits in two groups in flight at once, so its requests keep their
 * order. If the group statement fails as a whole (a deadlock, a row PostgreSQL refuses, a lost
 * connection), each of its requests is run again alone, so one bad request fails only itself.
 */

/** The facts the ingest statement reports for one request (see `ingestSql` in ingest.ts). */
export interface IngestRow {
  state: string;
  may_write: boolean;
  study_id: number;
  title: string;
  status: string;
  revision: number;
  fits: boolean;
  highest_seq: number;
  accepted: number;
  seqs: number[] | null;
}

/** One small batch of one capture, decoded and flagged, waiting to be written. */
export interface SmallBatch extends BatchColumns {
  captureId: number;
  userId: number;
  mayWriteAny: boolean;
  /** Whether someone watches the capture: the statement then returns the seqs it stored. */
  watched: boolean;
}

/** Writes one batch alone (the one-capture statement); null when the capture has no row. */
export type SoloIngest = (pool: pg.Pool, batch: SmallBatch) => Promise<IngestRow | null>;

/** Most readings one group statement carries (a lone larger batch still goes, alone). */
export const GROUP_MAX_READINGS = 20_000;
/**
 * Groups in flight at once. Two let one group be parsed and planned while the other commits
 * (its WAL flush); more only make groups smaller and compete for the same two cores.
 * `DRIFTBENCH_INGEST_GROUPS` overrides it (read when a pool's queue is made); `off` writes every
 * small batch alone, as before group commit — for comparing the two in `npm run bench -- live`.
 * Measured here on a machine shared with other work (live bench over the socket, 50 benches,
 * 20 s): 2 groups p95 90 ms, 1 group 187 ms, off 262 ms; PostgreSQL's CPU for the same readings
 * fell by about 40 % with groups over HTTP. Re-measure on an idle machine before changing it.
 */
export const GROUPS_IN_FLIGHT = 2;

function groupsSetting(): number | 'off' {
  const raw = process.env.DRIFTBENCH_INGEST_GROUPS?.trim();
  if (!raw) return GROUPS_IN_FLIGHT;
  if (raw === 'off') return 'off';
  const n = Number(raw);
  if (!Number.isInteger(n) || n < 1 || n > 16)
    throw new Error(`DRIFTBENCH_INGEST_GROUPS must be off or 1–16, not "${raw}"`);
  return n;
}

/** How the queue has been used since the process started (for benches and tests). */
export interface GroupStats {
  /** Statements that wrote two or more requests. */
  groups: number;
  /** Requests written by those statements. */
  groupedRequests: number;
  /** Requests that found nothing to share with and went alone. */
  soloRequests: number;
  /** Group statements that failed as a whole, their requests then run alone. */
  fallbacks: number;
  /** The most requests one group carried. */
  largestGroup: number;
  /** Requests waiting in the queue now. */
  waiting: number;
}

const LOCKED = LOCKED_STATUSES.map((x) => `'${x}'`).join(', ');

/**
 * The group statement. Per request ($1 index, $2 capture, $3 may write any, $4 user, $5 watched,
 * $6 highest seq of the batch) and per reading ($7 request index, $8 seq, $9 t, $10 value, $11
 * flags). It locks the captures named in id order (so two groups in flight can never deadlock on
 * each other), keeps the readings of requests allowed to write an open, unlocked capture, keeps
 * the earliest request's reading where two carry one seq, inserts with ON CONFLICT DO NOTHING
 * (the primary key stays the guard against a reading stored before), and moves each capture's
 * counters by what was new. It answers one row per request; `cap_*` columns are null when the
 * capture (or its DUT or study) does not exist.
 */
const GROUP_SQL = `WITH req AS (
     SELECT * FROM unnest($1::int[], $2::int[], $3::boolean[], $4::int[], $5::boolean[], $6::int[])
       AS r(rq, capture_id, any_cap, uid, watched, max_seq)),
   cap AS (
     SELECT c.id, c.state, c.operator_id, c.highest_seq, s.id AS study_id, s.title, s.status, s.revision,
       s.status IN (${LOCKED}) AS locked
     FROM captures c JOIN duts d ON d.id = c.dut_id JOIN studies s ON s.id = d.study_id
     WHERE c.id = ANY($2::int[]) ORDER BY c.id FOR NO KEY UPDATE OF c),
   ok AS (
     SELECT req.rq, req.capture_id FROM req JOIN cap ON cap.id = req.capture_id
     WHERE cap.state IN ('open', 'stalled') AND NOT cap.locked AND (req.any_cap OR cap.operator_id = req.uid)),
   src AS (
     SELECT DISTINCT ON (ok.capture_id, u.s) ok.rq, ok.capture_id, u.s, u.t, u.v, u.f
     FROM unnest($7::int[], $8::int[], $9::float8[], $10::float8[], $11::int2[]) AS u(rq, s, t, v, f)
     JOIN ok ON ok.rq = u.rq
     ORDER BY ok.capture_id, u.s, ok.rq),
   ins AS (
     INSERT INTO readings (capture_id, seq, t, value, flags)
     SELECT capture_id, s, t, v, f FROM src
     ON CONFLICT DO NOTHING RETURNING capture_id, seq),
   won AS (
     SELECT src.rq, src.s FROM ins JOIN src ON src.capture_id = ins.capture_id AND src.s = ins.seq),
   per_req AS (
     SELECT won.rq, count(*)::int AS accepted, array_agg(won.s) AS seqs FROM won GROUP BY won.rq),
   per_cap AS (
     SELECT req.capture_id, sum(per_req.accepted)::int AS accepted, max(req.max_seq) AS max_seq
     FROM per_req JOIN req ON req.rq = per_req.rq GROUP BY req.capture_id),
   upd AS (
     UPDATE captures c SET reading_count = c.reading_count + pc.accepted,
       highest_seq = GREATEST(c.highest_seq, pc.max_seq), updated_at = now(), last_reading_at = now(), state = 'open'
     FROM per_cap pc WHERE c.id = pc.capture_id
     RETURNING c.id)
   SELECT req.rq, cap.id AS cap_id, cap.state, cap.operator_id, cap.highest_seq, cap.study_id, cap.title,
     cap.status, cap.revision, COALESCE(per_req.accepted, 0) AS accepted,
     CASE WHEN req.watched THEN per_req.seqs END AS seqs
   FROM req LEFT JOIN cap ON cap.id = req.capture_id LEFT JOIN per_req ON per_req.rq = req.rq
   ORDER BY req.rq`;

interface GroupRow {
  rq: number;
  cap_id: number | null;
  state: string;
  operator_id: number | null;
  highest_seq: number;
  study_id: number;
  title: string;
  status: string;
  revision: number;
  accepted: number;
  seqs: number[] | null;
}

/**
 * Writes the batches of a group with one statement and answers, per batch in the group's order,
 * what its own statement would have answered. Throws when the statement fails as a whole.
 */
export async function ingestGroupStatement(
  pool: pg.Pool,
  batches: readonly SmallBatch[],
): Promise<Array<IngestRow | null>> {
  const k = batches.length;
  let total = 0;
  for (const b of batches) total += b.seqs.length;
  const rq = new Int32Array(total);
  const seqs = new Array<number>(total);
  const ts = new Array<number>(total);
  const values = new Array<number>(total);
  const flags = new Array<number>(total);
  let o = 0;
  batches.forEach((b, j) => {
    for (let i = 0; i < b.seqs.length; i++, o++) {
      rq[o] = j;
      seqs[o] = b.seqs[i];
      ts[o] = b.ts[i];
      values[o] = b.values[i];
      flags[o] = b.flags[i];
    }
  });
  const res = await pool.query<GroupRow>(GROUP_SQL, [
    int4Array(batches.map((_, j) => j)),
    int4Array(batches.map((b) => b.captureId)),
    batches.map((b) => b.mayWriteAny),
    int4Array(batches.map((b) => b.userId)),
    batches.map((b) => b.watched),
    int4Array(batches.map((b) => b.maxSeq)),
    int4Array(rq),
    int4Array(seqs),
    float8Array(ts),
    float8Array(values),
    int2Array(flags),
  ]);
  if (res.rows.length !== k) throw new Error(`group statement answered ${res.rows.length} of ${k}`);
  // The state and highest seq each request would have seen after the earlier requests of its
  // capture in the group: a stalled capture is open once one of them stored something, and
  // highest_seq moves by each request that stored something, as its own statement would move it.
  const stateNow = new Map<number, string>();
  const highestNow = new Map<number, number>();
  return res.rows.map((row, j): IngestRow | null => {
    if (row.cap_id === null) return null;
    const b = batches[j];
    const state = stateNow.get(b.captureId) ?? row.state;
    let highest = highestNow.get(b.captureId) ?? row.highest_seq;
    if (row.accepted > 0) {
      highest = Math.max(highest, b.maxSeq);
      stateNow.set(b.captureId, 'open');
    }
    highestNow.set(b.captureId, highest);
    return {
      state,
      may_write: b.mayWriteAny || row.operator_id === b.userId,
      study_id: row.study_id,
      title: row.title,
      status: row.status,
      revision: row.revision,
      fits: true,
      highest_seq: highest,
      accepted: row.accepted,
      seqs: b.watched ? (row.seqs ?? []) : null,
    };
  });
}

interface Job {
  batch: SmallBatch;
  resolve: (row: IngestRow | null) => void;
  reject: (err: unknown) => void;
}

/** The queue of one pool's small batches. */
class GroupQueue {
  private waiting: Job[] = [];
  private inFlight = 0;
  /** Captures with a request in a group in flight: their later requests wait for the next one. */
  private busy = new Map<number, number>();
  readonly stats: Omit<GroupStats, 'waiting'> = {
    groups: 0,
    groupedRequests: 0,
    soloRequests: 0,
    fallbacks: 0,
    largestGroup: 0,
  };

  get waitingNow(): number {
    return this.waiting.length;
  }

  private readonly slots: number;
  private readonly grouping: boolean;

  constructor(
    private readonly pool: pg.Pool,
    private readonly solo: SoloIngest,
  ) {
    const setting = groupsSetting();
    this.grouping = setting !== 'off';
    this.slots = setting === 'off' ? 0 : setting;
  }

  submit(batch: SmallBatch): Promise<IngestRow | null> {
    if (!this.grouping) {
      this.stats.soloRequests++;
      return this.solo(this.pool, batch);
    }
    return new Promise((resolve, reject) => {
      this.waiting.push({ batch, resolve, reject });
      this.pump();
    });
  }

  private pump(): void {
    while (this.inFlight < this.slots && this.waiting.length > 0) {
      const group = this.take();
      if (group.length === 0) return;
      this.inFlight++;
      for (const j of group)
        this.busy.set(j.batch.captureId, (this.busy.get(j.batch.captureId) ?? 0) + 1);
      void this.run(group).finally(() => {
        this.inFlight--;
        for (const j of group) {
          const left = this.busy.get(j.batch.captureId)! - 1;
          if (left === 0) this.busy.delete(j.batch.captureId);
          else this.busy.set(j.batch.captureId, left);
        }
        this.pump();
      });
    }
  }

  /**
   * The next group: waiting requests in arrival order, up to GROUP_MAX_READINGS (at least one),
   * skipping captures in flight — and every later request of a skipped capture, so a capture's
   * requests are written in the order they came.
   */
  private take(): Job[] {
    const group: Job[] = [];
    const rest: Job[] = [];
    const held = new Set<number>();
    let readings = 0;
    for (const job of this.waiting) {
      const id = job.batch.captureId;
      const n = job.batch.seqs.length;
      if (
        this.busy.has(id) ||
        held.has(id) ||
        (group.length > 0 && readings + n > GROUP_MAX_READINGS)
      ) {
        held.add(id);
        rest.push(job);
        continue;
      }
      group.push(job);
      readings += n;
    }
    this.waiting = rest;
    return group;
  }

  private async run(group: Job[]): Promise<void> {
    if (group.length === 1) {
      this.stats.soloRequests++;
      await this.alone(group[0]);
      return;
    }
    this.stats.groups++;
    this.stats.groupedRequests += group.length;
    this.stats.largestGroup = Math.max(this.stats.largestGroup, group.length);
    let rows: Array<IngestRow | null>;
    try {
      rows = await ingestGroupStatement(
        this.pool,
        group.map((j) => j.batch),
      );
    } catch {
      // Nothing of the group was stored (one statement, one transaction): each request again,
      // alone and in order, so only a request that fails by itself gets an error.
      this.stats.fallbacks++;
      for (const job of group) await this.alone(job);
      return;
    }
    group.forEach((job, j) => job.resolve(rows[j]));
  }

  private async alone(job: Job): Promise<void> {
    try {
      job.resolve(await this.solo(this.pool, job.batch));
    } catch (err) {
      job.reject(err);
    }
  }
}

const queues = new WeakMap<pg.Pool, GroupQueue>();

function queueOf(pool: pg.Pool, solo: SoloIngest): GroupQueue {
  let q = queues.get(pool);
  if (!q) {
    q = new GroupQueue(pool, solo);
    queues.set(pool, q);
  }
  return q;
}

/**
 * Writes a small batch, sharing a statement with the other small batches waiting on the same
 * pool. Answers what `solo` would answer for the batch alone (null: the capture has no row).
 */
export function ingestSmallBatch(
  pool: pg.Pool,
  batch: SmallBatch,
  solo: SoloIngest,
): Promise<IngestRow | null> {
  return queueOf(pool, solo).submit(batch);
}

/** How the pool's queue has been used (zeros when it has not been used). */
export function groupStats(pool: pg.Pool): GroupStats {
  const q = queues.get(pool);
  return q
    ? { ...q.stats, waiting: q.waitingNow }
    : { groups: 0, groupedRequests: 0, soloRequests: 0, fallbacks: 0, largestGroup: 0, waiting: 0 };
}
