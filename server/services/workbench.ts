import type pg from 'pg';
import { Op } from 'sequelize';
import { Capture, Checkpoint, Dut, Reference, Study, User } from '../models/index.js';
import { AppError, NotFoundError, ValidationError } from '../errors.js';
import { referenceCorrect, type StabilityKind } from '../../shared/analysis/index.js';
import {
  defaultDrift,
  prepare,
  stabilityOf,
  withDrift,
  type CaptureSummary,
} from './captureAnalysis.js';
import type { Series } from './readings.js';

const EMPTY: Series = {
  seq: new Int32Array(),
  t: new Float64Array(),
  value: new Float64Array(),
  flags: new Int16Array(),
};

/** Most captures one overlay request may name. */
export const MAX_OVERLAY = 12;

interface Named {
  capture: Capture;
  dut: Dut | null;
  checkpoint: Checkpoint | null;
}

/** Captures with their DUTs and checkpoints: three queries, whatever the number of captures. */
async function named(ids: number[]): Promise<Named[]> {
  const captures = await Capture.findAll({ where: { id: { [Op.in]: ids } } });
  const byId = new Map(captures.map((c) => [c.id, c]));
  const missing = ids.filter((id) => !byId.has(id));
  if (missing.length) throw new NotFoundError(`Capture ${missing.join(', ')}`);
  const [duts, checkpoints] = await Promise.all([
    Dut.findAll({ where: { id: { [Op.in]: [...new Set(captures.map((c) => c.dutId))] } } }),
    Checkpoint.findAll({
      where: { id: { [Op.in]: [...new Set(captures.map((c) => c.checkpointId))] } },
    }),
  ]);
  const dutOf = new Map(duts.map((d) => [d.id, d]));
  const cpOf = new Map(checkpoints.map((c) => [c.id, c]));
  return ids.map((id) => {
    const capture = byId.get(id)!;
    return {
      capture,
      dut: dutOf.get(capture.dutId) ?? null,
      checkpoint: cpOf.get(capture.checkpointId) ?? null,
    };
  });
}

/** The readings of several captures in one query, split per capture. */
async function seriesOf(pool: pg.Pool, ids: number[]): Promise<Map<number, Series>> {
  const res = await pool.query<[number, number, number, number, number]>({
    text: 'SELECT capture_id, seq, t, value, flags FROM readings WHERE capture_id = ANY($1::int[]) ORDER BY capture_id, seq',
    values: [ids],
    rowMode: 'array',
  });
  const out = new Map<number, Series>();
  let i = 0;
  const rows = res.rows;
  while (i < rows.length) {
    const id = rows[i][0];
    let j = i;
    while (j < rows.length && rows[j][0] === id) j++;
    const n = j - i;
    const s: Series = {
      seq: new Int32Array(n),
      t: new Float64Array(n),
      value: new Float64Array(n),
      flags: new Int16Array(n),
    };
    for (let k = 0; k < n; k++) {
      const r = rows[i + k];
      s.seq[k] = r[1];
      s.t[k] = r[2];
      s.value[k] = r[3];
      s.flags[k] = r[4];
    }
    out.set(id, s);
    i = j;
  }
  return out;
}

/**
 * `GET /api/captures/stability?ids=…&kind=`: the stability curves of several finished captures
 * for an overlay, each with its DUT and checkpoint, computed as the capture's own analysis route
 * does (default drift removed). The default (OADEV, octave τ) comes from the stored summaries;
 * another kind reads every capture's readings in one query. A constant number
 * of queries, never one per capture.
 */
export async function overlayCurves(pool: pg.Pool, ids: number[], kind: StabilityKind) {
  const unique = [...new Set(ids)];
  if (unique.length > MAX_OVERLAY) {
    throw new ValidationError(`ids: at most ${MAX_OVERLAY} captures in one overlay`, [
      { path: 'ids', message: `at most ${MAX_OVERLAY}` },
    ]);
  }
  const list = await named(unique);
  const open = list.filter((x) => x.capture.state !== 'finished').map((x) => x.capture.id);
  if (open.length)
    throw new AppError(
      409,
      'capture-not-finished',
      `Only finished captures can be overlaid; not finished: ${open.join(', ')}.`,
      { ids: open },
    );
  const fromSummary =
    kind === 'oadev' && list.every((x) => (x.capture.summary as CaptureSummary | null)?.stability);
  const series = fromSummary ? null : await seriesOf(pool, unique);
  return {
    kind,
    curves: list.map(({ capture: c, dut, checkpoint }) => {
      const stability = fromSummary
        ? (c.summary as CaptureSummary).stability
        : stabilityOf(
            withDrift(prepare(c, series!.get(c.id) ?? EMPTY), defaultDrift(c), []).prepared,
            kind,
            'octave',
          );
      return {
        captureId: c.id,
        dut: dut
          ? { id: dut.id, label: dut.label, unit: dut.unit, kind: dut.kind, studyId: dut.studyId }
          : null,
        checkpoint: checkpoint
          ? { id: checkpoint.id, name: checkpoint.name, order: checkpoint.position }
          : null,
        readingCount: c.readingCount,
        startedAt: c.startedAt,
        stability,
      };
    }),
  };
}

/** The metadata every export carries, in a fixed order, as (key, value) pairs. */
function metadataOf(
  c: Capture,
  d: {
    dut: Dut | null;
    checkpoint: Checkpoint | null;
    study: Study | null;
    reference: Reference | null;
    operator: User | null;
  },
): Array<[string, string]> {
  const s = c.summary as CaptureSummary | null;
  const u = s?.uncertainty as
    { combined?: number; expanded?: number; k?: number } | null | undefined;
  return [
    ['capture', String(c.id)],
    ['study', d.study ? `${d.study.id} ${d.study.title}` : ''],
    ['dut', d.dut?.label ?? ''],
    ['dut_kind', d.dut?.kind ?? ''],
    ['checkpoint', d.checkpoint?.name ?? ''],
    ['quantity', c.quantity],
    ['unit', c.unit],
    ['nominal', c.nominal === null ? '' : String(c.nominal)],
    ['gate_s', String(c.gateTime)],
    ['dead_time_s', c.deadTime === null ? '' : String(c.deadTime)],
    ['reference', d.reference?.name ?? ''],
    ['reference_offset', c.referenceOffset === null ? '' : String(c.referenceOffset)],
    ['reference_u', c.referenceUncertainty === null ? '' : String(c.referenceUncertainty)],
    ['ambient_c', c.ambientC === null ? '' : String(c.ambientC)],
    ['operator', d.operator?.name ?? ''],
    ['started_at', c.startedAt ? new Date(c.startedAt).toISOString() : ''],
    ['ended_at', c.endedAt ? new Date(c.endedAt).toISOString() : ''],
    ['state', c.state],
    ['readings', String(c.readingCount)],
    ['mean', s?.stats ? String(s.stats.mean) : ''],
    ['sd', s?.stats ? String(s.stats.sd) : ''],
    ['offset_ppm', s?.offsetPpm === null || s?.offsetPpm === undefined ? '' : String(s.offsetPpm)],
    ['u_combined', u?.combined === undefined ? '' : String(u.combined)],
    ['U_expanded', u?.expanded === undefined ? '' : String(u.expanded)],
    ['k', u?.k === undefined ? '' : String(u.k)],
    ['seal_sha256', c.sealSha256 ?? ''],
  ];
}

/** One CSV field: quoted when it holds a delimiter, a quote or a line break; formula-leading text made inert. */
export function csvField(v: string): string {
  let s = v;
  if (/^[=+\-@\t\r]/.test(s) && !/^[+-]?(\d|\.\d)/.test(s)) s = `'${s}`;
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** A metadata value on one `# key: value` line (line breaks folded). */
function headerValue(v: string): string {
  return v.replace(/[\r\n]+/g, ' ');
}

async function detailsOf(captures: Capture[]) {
  const ids = <T>(xs: Array<T | null>) => [...new Set(xs.filter((x): x is T => x !== null))];
  const [duts, checkpoints, references, operators] = await Promise.all([
    Dut.findAll({ where: { id: { [Op.in]: ids(captures.map((c) => c.dutId)) } } }),
    Checkpoint.findAll({ where: { id: { [Op.in]: ids(captures.map((c) => c.checkpointId)) } } }),
    Reference.findAll({ where: { id: { [Op.in]: ids(captures.map((c) => c.referenceId)) } } }),
    User.findAll({ where: { id: { [Op.in]: ids(captures.map((c) => c.operatorId)) } } }),
  ]);
  const studies = await Study.findAll({
    where: { id: { [Op.in]: ids(duts.map((d) => d.studyId)) } },
  });
  const m = <T extends { id: number }>(xs: T[]) => new Map(xs.map((x) => [x.id, x]));
  const [dm, cm, rm, om, sm] = [m(duts), m(checkpoints), m(references), m(operators), m(studies)];
  return (c: Capture) => {
    const dut = dm.get(c.dutId) ?? null;
    return {
      dut,
      checkpoint: cm.get(c.checkpointId) ?? null,
      reference: c.referenceId ? (rm.get(c.referenceId) ?? null) : null,
      operator: c.operatorId ? (om.get(c.operatorId) ?? null) : null,
      study: dut ? (sm.get(dut.studyId) ?? null) : null,
    };
  };
}

/**
 * A capture's own CSV: its metadata as `# key: value` lines, then one row per reading with the
 * raw value and the reference-corrected one (f_true = f_displayed·(1 + y_ref) for frequency).
 */
export async function captureCsv(pool: pg.Pool, id: number): Promise<string> {
  const c = await Capture.findByPk(id);
  if (!c) throw new NotFoundError('Capture');
  const details = (await detailsOf([c]))(c);
  const series = (await seriesOf(pool, [id])).get(id);
  const yRef = c.quantity === 'frequency' ? (c.referenceOffset ?? 0) : 0;
  const unit = c.unit.replace(/[^A-Za-z%]/g, '') || 'value';
  const lines = metadataOf(c, details).map(([k, v]) => `# ${k}: ${headerValue(v)}`);
  lines.push(`# correction: f_true = f_displayed * (1 + y_ref), y_ref = ${yRef}`);
  lines.push(`seq,t_s,value_${unit},corrected_${unit},flags`);
  if (series && series.seq.length) {
    const corrected = referenceCorrect(series.value, yRef);
    for (let i = 0; i < series.seq.length; i++) {
      lines.push(
        `${series.seq[i]},${series.t[i]},${series.value[i]},${corrected[i]},${series.flags[i]}`,
      );
    }
  }
  return lines.join('\n') + '\n';
}

/** The study-level export: one row per finished capture with its summary and metadata. */
export async function studyCapturesCsv(studyId: number): Promise<string> {
  const study = await Study.findByPk(studyId);
  if (!study) throw new NotFoundError('Study');
  const duts = await Dut.findAll({ where: { studyId }, attributes: ['id'] });
  const captures = duts.length
    ? await Capture.findAll({
        where: { dutId: { [Op.in]: duts.map((d) => d.id) }, state: 'finished' },
        order: [['id', 'ASC']],
      })
    : [];
  const details = await detailsOf(captures);
  const header = metadataOf(Capture.build({} as never), {
    dut: null,
    checkpoint: null,
    study: null,
    reference: null,
    operator: null,
  }).map(([k]) => k);
  const lines = [header.join(',')];
  for (const c of captures)
    lines.push(
      metadataOf(c, details(c))
        .map(([, v]) => csvField(v))
        .join(','),
    );
  return lines.join('\n') + '\n';
}
