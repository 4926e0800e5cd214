import { z } from 'zod';
import { BudgetLine, BudgetWire } from './budget.js';

export const AXES = ['x', 'y', 'z'] as const;
export type Axis = (typeof AXES)[number];

/**
 * The body of `POST /api/duts/:id/tilt-checks`: the finished captures of one guided tilt check
 * (flat, inverted, optionally on edge) at one checkpoint, and the set-up the server needs to form
 * the result's uncertainty. The server reads the captures' own statistics; nothing is taken from
 * the client but the ids and the set-up.
 */
export const TiltCheckCreate = z.strictObject({
  checkpointId: z.number().int().positive(),
  axis: z.enum(AXES).default('z'),
  flatCaptureId: z.number().int().positive(),
  invertedCaptureId: z.number().int().positive(),
  onEdgeCaptureId: z.number().int().positive().nullable().optional(),
  /** Local gravity at the bench, m/s² (WGS84 normal gravity at the lab); the plausible range on Earth. */
  localGravity: z
    .number()
    .finite()
    .min(9.76, 'must lie within 9.76…9.84 m/s²')
    .max(9.84, 'must lie within 9.76…9.84 m/s²')
    .optional(),
  /** One LSB of the sensor in mg (default: 0.0625 mg, the ±2 g span of the bench's sensor). */
  lsbMg: z.number().finite().positive('must be greater than zero').max(100).optional(),
  /** Largest angle between the board and its ideal pose, degrees (default 1°). */
  orientationErrorDeg: z.number().finite().min(0).max(45).optional(),
});
export type TiltCheckCreate = z.infer<typeof TiltCheckCreate>;
/** The body as a client sends it (axis may be left to its default). */
export type TiltCheckBody = z.input<typeof TiltCheckCreate>;

/** One budget line as stored with a tilt check (a budget line that always carries its note). */
export const TiltBudgetLine = BudgetLine.omit({ symbol: true }).extend({ note: z.string() });
export type TiltBudgetLine = z.infer<typeof TiltBudgetLine>;

/** A tilt check's budget: always worded with its coverage, never relative. */
export const TiltBudget = BudgetWire.extend({
  components: z.array(TiltBudgetLine),
  coverage: z.string(),
  relativeExpanded: z.null(),
});
export type TiltBudget = z.infer<typeof TiltBudget>;

/** A stored tilt check: the DUT's result at a checkpoint (one axis). */
export const TiltCheck = z.object({
  id: z.number().int(),
  dutId: z.number().int(),
  checkpointId: z.number().int(),
  axis: z.enum(AXES),
  flatCaptureId: z.number().int(),
  invertedCaptureId: z.number().int(),
  onEdgeCaptureId: z.number().int().nullable(),
  localGravity: z.number(),
  lsbMg: z.number(),
  orientationErrorDeg: z.number(),
  /** The ideal 1 g reading here, 1000·g/g_n mg. */
  idealMg: z.number(),
  offsetMg: z.number(),
  /** Measured scale in % of the ideal (100 = perfect). */
  sensitivityPct: z.number(),
  sensitivityErrorPct: z.number(),
  offset: TiltBudget,
  sensitivity: TiltBudget,
  onEdgeOffset: TiltBudget.nullable(),
  createdBy: z.number().int().nullable(),
  createdAt: z.string(),
});
export type TiltCheck = z.infer<typeof TiltCheck>;

/** `POST /api/duts/:id/tilt-checks` answers `{ tiltCheck }`; the GET answers `{ tiltChecks }`. */
export const TiltCheckResponse = z.object({ tiltCheck: TiltCheck });
export const TiltCheckList = z.object({ tiltChecks: z.array(TiltCheck) });

const Verdict = z.enum(['within', 'exceeds', 'inconclusive']);

/** Δ of one tilt-check quantity against the baseline's, as the matrix shows it. */
export const TiltChange = z.object({
  delta: z.number(),
  expandedUncertainty: z.number(),
  k: z.number(),
  coverage: z.string(),
  unit: z.enum(['mg', '%']),
  limitLow: z.number().nullable(),
  limitHigh: z.number().nullable(),
  /** null: no limit set for this quantity (Δ and U still given). */
  verdict: Verdict.nullable(),
  significant: z.boolean(),
});
export type TiltChange = z.infer<typeof TiltChange>;

const TiltAxisFigures = z.object({
  offsetMg: z.number(),
  uOffsetMg: z.number(),
  offsetExpanded: z.number(),
  sensitivityErrorPct: z.number(),
  uSensitivityPct: z.number(),
  sensitivityExpanded: z.number(),
});

/** A matrix cell's tilt-check part: the latest check at that checkpoint and, later, its change per axis. */
export const MatrixTiltCell = z.object({
  check: z.object({ id: z.number().int(), axes: z.partialRecord(z.enum(AXES), TiltAxisFigures) }),
  /** Against the baseline checkpoint's latest tilt check; null at the baseline or without one. */
  change: z
    .object({
      before: z.number().int(),
      axes: z.partialRecord(
        z.enum(AXES),
        z.object({ offset: TiltChange, sensitivity: TiltChange }),
      ),
    })
    .nullable(),
  /** Why no change could be formed (e.g. no tilt check at the baseline). */
  problem: z.string().optional(),
});
export type MatrixTiltCell = z.infer<typeof MatrixTiltCell>;

/** `GET /api/captures/:id/baseline`: what this capture is compared with, or why nothing. */
export const BASELINE_REASONS = [
  'not-finished',
  'is-baseline',
  'no-baseline',
  'no-baseline-orientation',
] as const;
export const CaptureBaseline = z.object({
  baseline: z
    .object({ id: z.number().int(), checkpointId: z.number().int(), checkpoint: z.string() })
    .nullable(),
  reason: z.enum(BASELINE_REASONS).nullable(),
  /** A sentence for the page ("No baseline of this orientation (flat) at “Baseline” …"). */
  message: z.string().nullable(),
});
export type CaptureBaseline = z.infer<typeof CaptureBaseline>;

/**
 * The SPI bridge's poll line that stream-reads one axis of the DBX-3 accelerometer (register map
 * in DEVELOPERS.md): command byte = register · 4 + read (2) + stream (1), then two clocking bytes
 * for the big-endian word — X1 0x08 → 0x23, Y1 0x0A → 0x2B, Z1 0x0C → 0x33.
 */
export const SPI_AXIS_QUERY: Record<Axis, string> = {
  x: '23 00 00',
  y: '2B 00 00',
  z: '33 00 00',
};

const AXIS_BY_REGISTER: Record<number, Axis> = { 0x08: 'x', 0x0a: 'y', 0x0c: 'z' };

/**
 * Which axis a hex-spi link profile reads (the register of its poll line's command byte), or null
 * for any other profile (a counter, an imported capture, a register that is not an axis word).
 */
export function spiAxisOf(
  profile: { parseRule?: string; queryCommand?: string } | null | undefined,
): Axis | null {
  if (!profile || profile.parseRule !== 'hex-spi' || !profile.queryCommand) return null;
  const first = /^\s*([0-9a-fA-F]{2})/.exec(profile.queryCommand);
  if (!first) return null;
  const cmd = parseInt(first[1], 16);
  return AXIS_BY_REGISTER[(cmd >> 2) & 0x3f] ?? null;
}
