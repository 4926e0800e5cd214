/**
 * The conditions two captures of one DUT were recorded under, side by side: a verdict compares
 * like with like only when the reference, the gate time, the instrument, the orientation and the
 * ambient temperature agree (and neither side is simulated while the other is real). Every
 * difference becomes a named mismatch that the comparison shows beside its verdict; nothing here
 * changes Δ or U — the budget's temperature and reference terms do that.
 */

/** What a capture was recorded under, as far as comparing it goes. */
export interface CaptureConditions {
  referenceId: number | null;
  /** The reference's name, for the message (the id is compared). */
  referenceName?: string | null;
  gateTime: number;
  instrumentId: number | null;
  instrumentName?: string | null;
  orientation: string | null;
  ambientC: number | null;
  simulated?: boolean;
}

export type ConditionKey =
  'reference' | 'gate' | 'instrument' | 'orientation' | 'ambient' | 'simulated';

export interface ConditionMismatch {
  key: ConditionKey;
  /** One sentence for the reader, naming both sides. */
  message: string;
  before: string | number | boolean | null;
  after: string | number | boolean | null;
}

/**
 * Ambient temperatures further apart than this (°C) are flagged. Driftbench's own choice for a
 * bench kept at about ±1 °C: 2 °C is beyond what its air conditioning holds (no source).
 */
export const AMBIENT_MISMATCH_C = 2;

function named(id: number | null, name: string | null | undefined, none: string): string {
  if (id === null) return none;
  return name ? name : `#${id}`;
}

function seconds(v: number): string {
  return `${Number(v.toPrecision(6))} s`;
}

/**
 * The mismatched conditions between a `before` and an `after` capture, in a fixed order
 * (reference, gate, instrument, orientation, ambient, simulated); empty when they agree.
 * Gate times are compared to 1 part in 10⁹ (common practice, no source: binary round-off).
 */
export function conditionMismatches(
  before: CaptureConditions,
  after: CaptureConditions,
): ConditionMismatch[] {
  const out: ConditionMismatch[] = [];
  if (before.referenceId !== after.referenceId) {
    const b = named(before.referenceId, before.referenceName, 'no reference');
    const a = named(after.referenceId, after.referenceName, 'no reference');
    const message =
      before.referenceId === null || after.referenceId === null
        ? `Only one capture is referenced: before ${b}, after ${a}. The unreferenced one carries its counter's own timebase error.`
        : `Different references: before ${b}, after ${a}. Their offsets do not cancel in Δ.`;
    out.push({ key: 'reference', message, before: before.referenceId, after: after.referenceId });
  }
  if (
    Math.abs(before.gateTime - after.gateTime) >
    1e-9 * Math.max(before.gateTime, after.gateTime)
  ) {
    out.push({
      key: 'gate',
      message: `Different gate times: before ${seconds(before.gateTime)}, after ${seconds(after.gateTime)}. Resolution and averaging differ.`,
      before: before.gateTime,
      after: after.gateTime,
    });
  }
  if (before.instrumentId !== after.instrumentId) {
    out.push({
      key: 'instrument',
      message: `Different instruments: before ${named(before.instrumentId, before.instrumentName, 'none recorded')}, after ${named(after.instrumentId, after.instrumentName, 'none recorded')}.`,
      before: before.instrumentId,
      after: after.instrumentId,
    });
  }
  if ((before.orientation ?? null) !== (after.orientation ?? null)) {
    out.push({
      key: 'orientation',
      message: `Different orientations: before ${before.orientation ?? 'not recorded'}, after ${after.orientation ?? 'not recorded'}.`,
      before: before.orientation ?? null,
      after: after.orientation ?? null,
    });
  }
  if (before.ambientC === null || after.ambientC === null) {
    if (before.ambientC !== after.ambientC) {
      out.push({
        key: 'ambient',
        message: `Ambient temperature recorded for one capture only (before ${before.ambientC === null ? 'not recorded' : `${before.ambientC} °C`}, after ${after.ambientC === null ? 'not recorded' : `${after.ambientC} °C`}).`,
        before: before.ambientC,
        after: after.ambientC,
      });
    }
  } else {
    const dT = after.ambientC - before.ambientC;
    if (Math.abs(dT) > AMBIENT_MISMATCH_C) {
      out.push({
        key: 'ambient',
        message: `Ambient temperatures differ by ${dT > 0 ? '+' : '−'}${Math.abs(dT).toFixed(1)} °C (before ${before.ambientC} °C, after ${after.ambientC} °C), more than ${AMBIENT_MISMATCH_C} °C.`,
        before: before.ambientC,
        after: after.ambientC,
      });
    }
  }
  if (!!before.simulated !== !!after.simulated) {
    out.push({
      key: 'simulated',
      message: `One capture is simulated: before ${before.simulated ? 'simulated' : 'real'}, after ${after.simulated ? 'simulated' : 'real'}.`,
      before: !!before.simulated,
      after: !!after.simulated,
    });
  }
  return out;
}
