/**
 * Pure helpers of the comparison workbench: the selection in the URL, the deviation at a chosen
 * τ, the plot as SVG and the tables as CSV. Tested in Node (tests/unit/client/workbench.test.ts).
 */
import { STABILITY_KINDS, type StabilityKind } from '../../shared/protocol/captures';
import type { StabilityPointWire } from '../../shared/protocol/models';

export interface Selection {
  ids: number[];
  kind: StabilityKind;
  /** τ of the deviation table, s. */
  tau: number | null;
  before: number | null;
  after: number | null;
  study: number | null;
}

type QueryValue = string | null | undefined | Array<string | null>;
const first = (v: QueryValue): string | undefined =>
  Array.isArray(v) ? (v[0] ?? undefined) : (v ?? undefined);
const positive = (v: QueryValue): number | null => {
  const n = Number(first(v));
  return Number.isFinite(n) && n > 0 ? n : null;
};

/** Reads the selection from a route query; anything malformed is dropped, never an error. */
export function parseSelection(q: Record<string, QueryValue>, max = 12): Selection {
  const ids = [
    ...new Set(
      (first(q.ids) ?? '')
        .split(',')
        .map((s) => Number(s))
        .filter((n) => Number.isInteger(n) && n > 0),
    ),
  ].slice(0, max);
  const kind = (STABILITY_KINDS as readonly string[]).includes(first(q.kind) ?? '')
    ? (first(q.kind) as StabilityKind)
    : 'oadev';
  const pick = (v: QueryValue) => {
    const n = positive(v);
    return n !== null && Number.isInteger(n) && ids.includes(n) ? n : null;
  };
  const study = positive(q.study);
  return {
    ids,
    kind,
    tau: positive(q.tau),
    before: pick(q.before),
    after: pick(q.after),
    study: study && Number.isInteger(study) ? study : null,
  };
}

/** The query that reproduces a selection (only what differs from the defaults). */
export function selectionQuery(s: Selection): Record<string, string> {
  const q: Record<string, string> = {};
  if (s.study) q.study = String(s.study);
  if (s.ids.length) q.ids = s.ids.join(',');
  if (s.kind !== 'oadev') q.kind = s.kind;
  if (s.tau) q.tau = String(s.tau);
  if (s.before) q.before = String(s.before);
  if (s.after) q.after = String(s.after);
  return q;
}

/** A stability point as the contract carries it, or one the page made (the interval may be absent). */
export type CurvePointLike = Pick<StabilityPointWire, 'tau' | 'dev'> &
  Partial<Pick<StabilityPointWire, 'lo' | 'hi'>>;

/**
 * The deviation at τ: the point itself when the curve has it, otherwise a straight line between
 * the neighbours on log–log axes (how the curve is drawn); null outside the curve's τ range.
 */
export function devAt(
  points: readonly CurvePointLike[],
  tau: number,
): { dev: number; lo?: number; hi?: number; exact: boolean } | null {
  const pts = points.filter((p) => p.tau > 0 && p.dev > 0).sort((a, b) => a.tau - b.tau);
  const hit = pts.find((p) => Math.abs(p.tau / tau - 1) < 1e-9);
  if (hit) return { dev: hit.dev, lo: hit.lo, hi: hit.hi, exact: true };
  for (let i = 1; i < pts.length; i++) {
    const a = pts[i - 1];
    const b = pts[i];
    if (a.tau < tau && tau < b.tau) {
      const f = Math.log(tau / a.tau) / Math.log(b.tau / a.tau);
      return { dev: Math.exp(Math.log(a.dev) + f * Math.log(b.dev / a.dev)), exact: false };
    }
  }
  return null;
}

/** One CSV field, quoted when needed; text that a spreadsheet would run as a formula is made inert. */
export function csvField(v: string | number | null | undefined): string {
  if (v === null || v === undefined) return '';
  let s = typeof v === 'number' ? String(v) : v;
  if (typeof v === 'string' && /^[=+\-@]/.test(s) && !/^[+-]?(\d|\.\d)/.test(s)) s = `'${s}`;
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

export function toCsv(
  header: string[],
  rows: Array<Array<string | number | null | undefined>>,
): string {
  return [header, ...rows].map((r) => r.map(csvField).join(',')).join('\n') + '\n';
}

export interface SvgSeries {
  label: string;
  colour: string;
  dashed?: boolean;
  points: CurvePointLike[];
}

const esc = (s: string) =>
  s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');

/**
 * The overlay as a standalone SVG: log–log axes with a line per decade, each curve as markers
 * joined by lines with its interval as a translucent band, and a legend. Vector, for reports.
 */
export function stabilitySvg(
  series: SvgSeries[],
  title: string,
  width = 800,
  height = 500,
): string {
  const all = series.flatMap((s) => s.points.filter((p) => p.tau > 0 && p.dev > 0));
  const left = 80;
  const right = 20;
  const top = 40;
  const legendH = 18 * series.length + 10;
  const bottom = 50 + legendH;
  const w = width - left - right;
  const h = height - top - bottom;
  const parts: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" font-family="sans-serif" font-size="12">`,
    `<rect width="${width}" height="${height}" fill="#ffffff"/>`,
    `<text x="${left}" y="24" font-size="15" font-weight="600">${esc(title)}</text>`,
  ];
  if (!all.length) {
    parts.push(`<text x="${left}" y="${top + 20}">No stability points.</text></svg>`);
    return parts.join('');
  }
  const ys = all.flatMap((p) =>
    [p.dev, p.lo, p.hi].filter((v): v is number => typeof v === 'number' && v > 0),
  );
  const x0 = Math.floor(Math.log10(Math.min(...all.map((p) => p.tau))));
  const x1 = Math.max(x0 + 1, Math.ceil(Math.log10(Math.max(...all.map((p) => p.tau)))));
  const y0 = Math.floor(Math.log10(Math.min(...ys)));
  const y1 = Math.max(y0 + 1, Math.ceil(Math.log10(Math.max(...ys))));
  const X = (tau: number) => left + ((Math.log10(tau) - x0) / (x1 - x0)) * w;
  const Y = (v: number) => top + h - ((Math.log10(v) - y0) / (y1 - y0)) * h;
  const f = (n: number) => n.toFixed(1);
  parts.push(
    `<rect x="${left}" y="${top}" width="${w}" height="${h}" fill="none" stroke="#cfc8b9"/>`,
  );
  for (let d = x0; d <= x1; d++) {
    parts.push(
      `<line x1="${f(X(10 ** d))}" y1="${top}" x2="${f(X(10 ** d))}" y2="${top + h}" stroke="#e2ddd2"/>`,
    );
    parts.push(
      `<text x="${f(X(10 ** d))}" y="${top + h + 16}" text-anchor="middle">1e${d} s</text>`,
    );
  }
  for (let d = y0; d <= y1; d++) {
    parts.push(
      `<line x1="${left}" y1="${f(Y(10 ** d))}" x2="${left + w}" y2="${f(Y(10 ** d))}" stroke="#e2ddd2"/>`,
    );
    parts.push(`<text x="${left - 6}" y="${f(Y(10 ** d) + 4)}" text-anchor="end">1e${d}</text>`);
  }
  parts.push(
    `<text x="${left + w / 2}" y="${top + h + 34}" text-anchor="middle">averaging time τ</text>`,
  );
  series.forEach((s, i) => {
    const pts = s.points.filter((p) => p.tau > 0 && p.dev > 0).sort((a, b) => a.tau - b.tau);
    const band = pts.filter((p) => (p.lo ?? 0) > 0 && (p.hi ?? 0) > 0);
    if (band.length > 1) {
      const upper = band.map((p) => `${f(X(p.tau))},${f(Y(p.hi!))}`);
      const lower = band.map((p) => `${f(X(p.tau))},${f(Y(p.lo!))}`).reverse();
      parts.push(
        `<polygon points="${[...upper, ...lower].join(' ')}" fill="${s.colour}" fill-opacity="0.16" stroke="none"/>`,
      );
    }
    parts.push(
      `<polyline points="${pts.map((p) => `${f(X(p.tau))},${f(Y(p.dev))}`).join(' ')}" fill="none" stroke="${s.colour}" stroke-width="1.25"${s.dashed ? ' stroke-dasharray="6 4"' : ''}/>`,
    );
    for (const p of pts) {
      parts.push(
        s.dashed
          ? `<rect x="${f(X(p.tau) - 3)}" y="${f(Y(p.dev) - 3)}" width="6" height="6" fill="#ffffff" stroke="${s.colour}" stroke-width="1.5"/>`
          : `<circle cx="${f(X(p.tau))}" cy="${f(Y(p.dev))}" r="3" fill="#ffffff" stroke="${s.colour}" stroke-width="1.5"/>`,
      );
    }
    const ly = top + h + 52 + i * 18;
    parts.push(
      `<line x1="${left}" y1="${ly - 4}" x2="${left + 26}" y2="${ly - 4}" stroke="${s.colour}" stroke-width="1.5"${s.dashed ? ' stroke-dasharray="6 4"' : ''}/>`,
    );
    parts.push(`<text x="${left + 34}" y="${ly}">${esc(s.label)}</text>`);
  });
  parts.push('</svg>');
  return parts.join('');
}
