/**
 * A matrix cell's tilt check in words and glyph figures: at the baseline each axis's offset and
 * sensitivity error with their expanded uncertainty; later, each axis's change of both against
 * the baseline's tilt check, with the server's verdict (null when that quantity has no limit).
 * Pure, tested in tests/unit/client/tiltCell.test.ts.
 */
import type { MatrixTiltCell, TiltChange } from '../../shared/protocol/accelerometer';
import type { QuantityLimitView } from '../../shared/protocol/dutQuantities';
import { formatSigned } from './si';

export interface TiltQuantityLine {
  label: string;
  text: string;
  /** Glyph figures when compared against the baseline. */
  glyph: {
    delta: number;
    expanded: number;
    low: number | null;
    high: number | null;
    k: number;
    unit: string;
  } | null;
  verdict: TiltChange['verdict'];
}

export interface TiltAxisView {
  axis: string;
  offset: TiltQuantityLine;
  sensitivity: TiltQuantityLine;
}

/** Decimals that show a figure to about a tenth of its uncertainty (2…4 here). */
function decimals(u: number): number {
  if (!(u > 0) || !Number.isFinite(u)) return 2;
  return Math.max(2, Math.min(4, Math.ceil(-Math.log10(u)) + 1));
}

function changeLine(label: string, ch: TiltChange): TiltQuantityLine {
  const d = decimals(ch.expandedUncertainty);
  return {
    label,
    text: `Δ ${formatSigned(ch.delta, d)} ± ${ch.expandedUncertainty.toFixed(d)} ${ch.unit}`,
    glyph: {
      delta: ch.delta,
      expanded: ch.expandedUncertainty,
      low: ch.limitLow,
      high: ch.limitHigh,
      k: ch.k,
      unit: ch.unit,
    },
    verdict: ch.verdict,
  };
}

/** The axes of a tilt cell, x → z, in the form the matrix draws them. */
export function tiltCellView(tilt: MatrixTiltCell): TiltAxisView[] {
  const out: TiltAxisView[] = [];
  for (const axis of ['x', 'y', 'z'] as const) {
    const here = tilt.check.axes[axis];
    if (!here) continue;
    const change = tilt.change?.axes[axis];
    if (change) {
      out.push({
        axis: axis.toUpperCase(),
        offset: changeLine('offset', change.offset),
        sensitivity: changeLine('sensitivity', change.sensitivity),
      });
      continue;
    }
    const dO = decimals(here.offsetExpanded);
    const dS = decimals(here.sensitivityExpanded);
    out.push({
      axis: axis.toUpperCase(),
      offset: {
        label: 'offset',
        text: `${formatSigned(here.offsetMg, dO)} ± ${here.offsetExpanded.toFixed(dO)} mg`,
        glyph: null,
        verdict: null,
      },
      sensitivity: {
        label: 'sensitivity',
        text: `${formatSigned(here.sensitivityErrorPct, dS)} ± ${here.sensitivityExpanded.toFixed(dS)} %`,
        glyph: null,
        verdict: null,
      },
    });
  }
  return out;
}

/** The worst verdict of a tilt cell's changes (exceeds > inconclusive > within), or null when none was formed. */
export function tiltCellVerdict(tilt: MatrixTiltCell | null | undefined): TiltChange['verdict'] {
  if (!tilt?.change) return null;
  const verdicts = Object.values(tilt.change.axes).flatMap((a) =>
    a ? [a.offset.verdict, a.sensitivity.verdict] : [],
  );
  if (verdicts.includes('exceeds')) return 'exceeds';
  if (verdicts.includes('inconclusive')) return 'inconclusive';
  return verdicts.includes('within') ? 'within' : null;
}

/** One limit as the plan writes it: ±L, L_lo … L_hi, ≥ L_lo or ≤ L_hi, in its unit. */
function boundsText(l: QuantityLimitView): string {
  // A stability is a deviation: its limit is one upper value.
  if (l.key === 'stability' && l.limit !== null) return `≤ ${l.limit} ${l.unit}`;
  if (l.limit !== null) return `±${l.limit} ${l.unit}`;
  if (l.limitLow !== null && l.limitHigh !== null)
    return `${formatSigned(l.limitLow, 2)} … ${formatSigned(l.limitHigh, 2)} ${l.unit}`;
  if (l.limitLow !== null) return `≥ ${formatSigned(l.limitLow, 2)} ${l.unit}`;
  if (l.limitHigh !== null) return `≤ ${formatSigned(l.limitHigh, 2)} ${l.unit}`;
  return 'no limit';
}

/**
 * The limits of a DUT whose kind has several quantities, "offset ±20 mg · sensitivity ±1 %" (a
 * stability limit names its τ); null for a kind with one limit, whose text the plan already writes.
 */
export function quantityLimitsText(dut: { limits?: QuantityLimitView[] }): string | null {
  const limits = dut.limits ?? [];
  if (limits.length < 2) return null;
  const set = limits.filter(
    (l, i) => i === 0 || l.limit !== null || l.limitLow !== null || l.limitHigh !== null,
  );
  return set
    .map(
      (l) =>
        `${l.label.toLowerCase()}${l.tauS !== undefined ? ` at τ = ${l.tauS} s` : ''} ${boundsText(l)}`,
    )
    .join(' · ');
}
