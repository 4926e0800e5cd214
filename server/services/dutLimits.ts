import type { Dut } from '../models/index.js';
import { ValidationError } from '../errors.js';
import {
  limitProblem,
  quantitiesOf,
  type DutQuantityLimits,
  type QuantityKey,
  type QuantityLimit,
} from '../../shared/protocol/dutQuantities.js';

/**
 * Applies `limits` of PATCH /api/duts/:id to a DUT (not saved): each key must be a quantity of the
 * DUT's kind, with a limit that suits it (400 naming `limits.<key>` and the reason). The kind's
 * primary quantity writes the DUT's own limit columns (so comparisons of plain captures keep using
 * them); the others are kept in `quantityLimits`; null clears an optional one.
 */
export function applyQuantityLimits(dut: Dut, limits: DutQuantityLimits | undefined): void {
  if (!limits) return;
  const quantities = quantitiesOf(dut.kind);
  const problems: Array<{ path: string; message: string }> = [];
  for (const [key, value] of Object.entries(limits) as Array<[QuantityKey, QuantityLimit | null]>) {
    const problem = limitProblem(dut.kind, key, value);
    if (problem) problems.push({ path: `limits.${key}`, message: problem });
  }
  if (problems.length)
    throw new ValidationError(`${problems[0].path}: ${problems[0].message}`, problems);
  const stored: Partial<Record<QuantityKey, QuantityLimit>> = { ...(dut.quantityLimits ?? {}) };
  for (const [key, value] of Object.entries(limits) as Array<[QuantityKey, QuantityLimit | null]>) {
    if (quantities[0]?.key === key && value) {
      dut.limitValue = value.limit ?? null;
      dut.limitLow = value.limit != null ? null : (value.limitLow ?? null);
      dut.limitHigh = value.limit != null ? null : (value.limitHigh ?? null);
      const unit = quantities[0].unit;
      // The primary limit's unit follows the quantity when the DUT's own is not one of its kind.
      if (unit === 'mg' || unit === '%') dut.limitUnit = unit;
    } else if (value === null) {
      delete stored[key];
    } else {
      stored[key] = value;
    }
  }
  dut.quantityLimits = Object.keys(stored).length ? stored : null;
  // Sequelize does not see a change inside a JSONB value replaced by an equal-looking object.
  dut.changed('quantityLimits', true);
}
