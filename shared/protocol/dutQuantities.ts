import { z } from 'zod';

/**
 * What each DUT kind is judged on: its quantities, their units and whether each has a limit of its
 * own. The kind's first quantity is its primary one, whose limit is the DUT's `limit`/`limitLow`/
 * `limitHigh` (kept for the frequency case and for plain captures); the others keep theirs in
 * `limits`. One table, read by the API's validation, the plan's forms and the matrix.
 */
export interface DutQuantity {
  key: QuantityKey;
  label: string;
  /** Unit of the limit and of Δ. */
  unit: 'ppm' | 'ppb' | 'mg' | '%';
  /** One value per sensing axis (an accelerometer's x, y, z). */
  perAxis: boolean;
  /** Needs a τ (seconds) beside its limit: a stability at a chosen averaging time. */
  needsTau: boolean;
  /** Optional quantities may be left without a limit. */
  optional: boolean;
}

export const QUANTITY_KEYS = ['frequency-offset', 'stability', 'offset', 'sensitivity'] as const;
export type QuantityKey = (typeof QUANTITY_KEYS)[number];

const FREQUENCY: DutQuantity[] = [
  {
    key: 'frequency-offset',
    label: 'Frequency offset',
    unit: 'ppm',
    perAxis: false,
    needsTau: false,
    optional: false,
  },
  {
    key: 'stability',
    label: 'Stability σy(τ)',
    unit: 'ppb',
    perAxis: false,
    needsTau: true,
    optional: true,
  },
];

/** The quantities of each kind (kinds not listed have only their primary, frequency-like limit). */
export const KIND_QUANTITIES: Record<string, DutQuantity[]> = {
  crystal: FREQUENCY,
  oscillator: FREQUENCY,
  'tuning-fork': FREQUENCY,
  tcxo: FREQUENCY,
  accelerometer: [
    { key: 'offset', label: 'Offset', unit: 'mg', perAxis: true, needsTau: false, optional: false },
    {
      key: 'sensitivity',
      label: 'Sensitivity',
      unit: '%',
      perAxis: true,
      needsTau: false,
      optional: false,
    },
  ],
};

/** The quantities of a kind; an unknown kind has none beyond its primary limit. */
export function quantitiesOf(kind: string): DutQuantity[] {
  return KIND_QUANTITIES[kind] ?? [];
}

/** A limit on one quantity: ±limit or bounds (one side may be open); τ for a stability limit. */
export const QuantityLimit = z
  .strictObject({
    limit: z.number().finite().positive('must be greater than zero').nullable().optional(),
    limitLow: z.number().finite().nullable().optional(),
    limitHigh: z.number().finite().nullable().optional(),
    tauS: z.number().finite().positive('must be greater than zero').max(1e6).optional(),
  })
  .superRefine((v, ctx) => {
    const bounds = v.limitLow != null || v.limitHigh != null;
    if (v.limit != null && bounds) {
      ctx.addIssue({
        code: 'custom',
        path: ['limit'],
        message: 'give either a symmetric limit or lower/upper bounds, not both',
      });
    }
    if (v.limitLow != null && v.limitHigh != null && !(v.limitLow < v.limitHigh)) {
      ctx.addIssue({
        code: 'custom',
        path: ['limitHigh'],
        message: 'must be above the lower bound',
      });
    }
  });
export type QuantityLimit = z.infer<typeof QuantityLimit>;

/**
 * `limits` in PATCH /api/duts/:id: per quantity key, a limit, or null to clear an optional one.
 * Which keys a DUT accepts depends on its kind; the service answers 400 naming the field.
 */
export const DutQuantityLimits = z.partialRecord(z.enum(QUANTITY_KEYS), QuantityLimit.nullable());
export type DutQuantityLimits = z.infer<typeof DutQuantityLimits>;

/** A quantity's limit as the API returns it: bounds in the quantity's unit (null: open side). */
export const QuantityLimitView = z.object({
  key: z.enum(QUANTITY_KEYS),
  label: z.string(),
  unit: z.string(),
  perAxis: z.boolean(),
  limit: z.number().nullable(),
  limitLow: z.number().nullable(),
  limitHigh: z.number().nullable(),
  tauS: z.number().optional(),
});
export type QuantityLimitView = z.infer<typeof QuantityLimitView>;

/** Why a limit given for `key` does not suit a DUT of `kind` (null when it does). */
export function limitProblem(
  kind: string,
  key: QuantityKey,
  value: QuantityLimit | null,
): string | null {
  const q = quantitiesOf(kind).find((x) => x.key === key);
  if (!q) {
    const own = quantitiesOf(kind).map((x) => x.key);
    return own.length
      ? `is not a quantity of ${article(kind)} (it has ${own.join(', ')})`
      : `${article(kind)} has no quantity limits beyond its limit`;
  }
  if (value === null)
    return q.optional
      ? null
      : `cannot be cleared: ${article(kind)} is always judged on its ${q.label.toLowerCase()}`;
  const any = value.limit != null || value.limitLow != null || value.limitHigh != null;
  if (!any) return 'give the limit (or a lower and/or upper bound)';
  if (q.needsTau && value.tauS === undefined)
    return 'needs tauS, the averaging time the limit applies at';
  if (!q.needsTau && value.tauS !== undefined) return `tauS applies only to a stability limit`;
  if (q.key === 'stability' && (value.limitLow != null || value.limit == null))
    return 'a stability limit is one upper value: give limit';
  return null;
}

/**
 * Every quantity's limit of a DUT, as the API returns it: the primary quantity's from the DUT's
 * limit columns (in the DUT's limit unit), the others from its stored `limits` (null: none set).
 */
export function quantityLimitsView(
  kind: string,
  primary: {
    limit: number | null;
    limitLow: number | null;
    limitHigh: number | null;
    limitUnit: string;
  },
  stored: Partial<Record<QuantityKey, QuantityLimit>> | null,
): QuantityLimitView[] {
  return quantitiesOf(kind).map((q, i) => {
    const own = i === 0 ? primary : (stored?.[q.key] ?? null);
    const base = {
      key: q.key,
      label: q.label,
      unit: i === 0 ? primary.limitUnit : q.unit,
      perAxis: q.perAxis,
    };
    if (!own) return { ...base, limit: null, limitLow: null, limitHigh: null };
    const limit = own.limit ?? null;
    return {
      ...base,
      limit,
      limitLow: limit !== null ? -limit : (own.limitLow ?? null),
      limitHigh: limit !== null ? limit : (own.limitHigh ?? null),
      ...('tauS' in own && own.tauS !== undefined ? { tauS: own.tauS } : {}),
    };
  });
}

/** "a crystal", "an accelerometer", "an oscillator". */
function article(kind: string): string {
  return `${/^[aeiou]/.test(kind) ? 'an' : 'a'} ${kind}`;
}
