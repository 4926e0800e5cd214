/**
 * The capture page's seams by quantity: which sections a capture gets, the conditions it lists and
 * the words they use. A frequency capture has stability, a counter and a reference; an
 * acceleration capture has none of them — its sections speak of gravity, the sensor's LSB and
 * the board's pose (issue 13). Pure functions, tested in tests/unit/client/captureKind.test.ts.
 */
import type { CaptureDetail } from '../api/captures';
import { counterText } from '../api/lab';
import { formatDateTime, formatScientific } from './format';
import { formatSi, formatSigned } from './si';

export type CaptureKind = 'frequency' | 'acceleration' | 'plain';

/** Which family of sections a capture gets. */
export function captureKind(c: Pick<CaptureDetail, 'quantity'>): CaptureKind {
  if (c.quantity === 'frequency') return 'frequency';
  if (c.quantity === 'acceleration') return 'acceleration';
  return 'plain';
}

/** The sections of the capture page, in order, for a kind (data-section names). */
export function sectionsFor(kind: CaptureKind): string[] {
  const common = ['seal', 'compare', 'readings', 'statistics', 'conditions'];
  if (kind === 'frequency') return [...common, 'stability', 'budget', 'files'];
  if (kind === 'acceleration') return [...common, 'gravity', 'budget', 'files'];
  return [...common, 'budget', 'files'];
}

const ORIENTATION: Record<string, string> = {
  flat: 'flat (Z up)',
  'on-edge': 'on edge (Z level)',
  inverted: 'inverted (Z down)',
  'x-up': 'X up',
  'x-down': 'X down',
  'y-up': 'Y up',
  'y-down': 'Y down',
  'z-up': 'Z up',
  'z-down': 'Z down',
  other: 'other',
};

/** An orientation as the page writes it. */
export function orientationText(o: string | null | undefined): string {
  return o ? (ORIENTATION[o] ?? o) : 'not recorded';
}

/** What the Z axis should read in a pose, in g (null when the pose does not say). */
export function idealZ(o: string | null | undefined): 1 | 0 | -1 | null {
  if (o === 'flat' || o === 'z-up') return 1;
  if (o === 'inverted' || o === 'z-down') return -1;
  if (o === 'on-edge' || o === 'x-up' || o === 'x-down' || o === 'y-up' || o === 'y-down') return 0;
  return null;
}

/** The acceleration figures of a static capture: what Z should read in its pose and how far the mean is from it. */
export interface GravityFigures {
  ideal: string;
  fromIdeal: string;
  /** The tilt the mean implies for a level axis, asin(a/1 g) (common practice, no source). */
  tilt: string | null;
}

/**
 * The mean against the ideal reading of its pose at standard gravity (1 g = 1000 mg at g_n): the
 * difference holds the offset, the scale error (±1 g poses) and the pose's own error.
 */
export function gravityFigures(
  meanMg: number,
  orientation: string | null | undefined,
): GravityFigures | null {
  const z = idealZ(orientation);
  if (z === null || !Number.isFinite(meanMg)) return null;
  const idealMg = 1000 * z;
  const tilt =
    z === 0 && Math.abs(meanMg) <= 1000
      ? `${formatSigned((Math.asin(meanMg / 1000) * 180) / Math.PI, 3)}°`
      : null;
  return {
    ideal: `${formatSigned(idealMg, 0)} mg (${z === 0 ? '0 g' : `${z > 0 ? '+' : '−'}1 g`})`,
    fromIdeal: `${formatSigned(meanMg - idealMg, 3)} mg`,
    tilt,
  };
}

export interface ConditionRow {
  term: string;
  value: string;
  detail?: string;
}

function duration(a: string, b: string | null): string {
  if (!b) return '';
  const s = (new Date(b).getTime() - new Date(a).getTime()) / 1000;
  if (!Number.isFinite(s) || s < 0) return '';
  if (s < 120) return `${Math.round(s)} s`;
  if (s < 7200) return `${Math.round(s / 60)} min`;
  return `${(s / 3600).toFixed(1)} h`;
}

/** The conditions a capture ran under, in the words of its kind (no counter or reference for a sensor). */
export function conditionRows(c: CaptureDetail): ConditionRow[] {
  const kind = captureKind(c);
  const instrument = {
    term: 'Instrument',
    value: c.instrument?.name
      ? `${c.instrument.name}${c.simulated ? ' (simulated)' : ''}`
      : c.simulated
        ? 'a simulator'
        : '—',
  };
  const tail: ConditionRow[] = [
    {
      term: 'Ambient',
      value: c.ambientC === null ? 'not recorded' : `${Number(c.ambientC).toFixed(1)} °C`,
    },
    { term: 'Orientation', value: c.orientation ? orientationText(c.orientation) : '—' },
    { term: 'Operator', value: c.operator?.name ?? '—' },
    { term: 'Started', value: formatDateTime(c.startedAt) },
    {
      term: 'Ended',
      value: c.endedAt ? formatDateTime(c.endedAt) : c.state === 'open' ? 'still recording' : '—',
      detail: duration(c.startedAt, c.endedAt),
    },
  ];
  if (kind !== 'frequency') {
    return [
      { term: 'Sample interval', value: formatSi(c.gateTime, 's') },
      instrument,
      ...(kind === 'acceleration' && c.unit === 'mg'
        ? [
            {
              term: 'Sensor resolution',
              value: '0.0625 mg per LSB',
              detail: "±2 g span, 16 000 digits per g (the budget's default)",
            },
          ]
        : []),
      ...tail,
    ];
  }
  return [
    { term: 'Gate time', value: formatSi(c.gateTime, 's') },
    { term: 'Dead time', value: c.deadTime === null ? '—' : formatSi(c.deadTime, 's') },
    instrument,
    {
      term: 'Reference',
      value: c.reference ? c.reference.name : 'none (counter timebase taken as exact)',
    },
    {
      term: 'Reference offset',
      value: c.referenceOffset === null ? '—' : formatScientific(c.referenceOffset),
      detail:
        c.referenceUncertainty === null
          ? ''
          : `u = ${formatScientific(c.referenceUncertainty).replace(/^\+/, '')}`,
    },
    {
      term: 'Reference ageing',
      value:
        c.referenceId === null
          ? '—'
          : c.referenceAgeingPerDay === null || c.referenceAgeingPerDay === undefined
            ? 'not recorded'
            : `${formatScientific(c.referenceAgeingPerDay)} /day`,
      detail: c.referenceVerifiedAt ? `verified ${c.referenceVerifiedAt}` : '',
    },
    {
      term: 'Counter',
      value: c.counterType
        ? counterText({
            counterType: c.counterType,
            counterResolution: c.counterResolution ?? null,
          })
        : 'not recorded (reciprocal, 100 ps assumed)',
      detail: 'copied at start',
    },
    ...tail,
  ];
}
