import { Op } from 'sequelize';
import { Capture, Dut, Instrument, Reference } from '../models/index.js';

/**
 * What comparing captures reads besides the captures' own rows: their DUTs, and the references and
 * instruments they name (a reference's kind for its default ageing, both names for the recording
 * conditions). Loaded once for a whole matrix, so its cells run no query of their own.
 */
export interface ComparisonInputs {
  captures: ReadonlyMap<number, Capture>;
  duts: ReadonlyMap<number, Dut>;
  references: ReadonlyMap<number, Reference>;
  instruments: ReadonlyMap<number, Instrument>;
}

/** Two queries whatever the number of captures (none when they name no reference or instrument). */
export async function loadComparisonInputs(
  captures: readonly Capture[],
  duts: readonly Dut[],
): Promise<ComparisonInputs> {
  const ids = (pick: (c: Capture) => number | null) => [
    ...new Set(captures.map(pick).filter((x): x is number => x !== null)),
  ];
  const referenceIds = ids((c) => c.referenceId);
  const instrumentIds = ids((c) => c.instrumentId);
  const [references, instruments] = await Promise.all([
    referenceIds.length
      ? Reference.findAll({ where: { id: { [Op.in]: referenceIds } } })
      : Promise.resolve([]),
    instrumentIds.length
      ? Instrument.findAll({
          where: { id: { [Op.in]: instrumentIds } },
          attributes: ['id', 'name'],
        })
      : Promise.resolve([]),
  ]);
  return {
    captures: new Map(captures.map((c) => [c.id, c])),
    duts: new Map(duts.map((d) => [d.id, d])),
    references: new Map(references.map((r) => [r.id, r])),
    instruments: new Map(instruments.map((i) => [i.id, i])),
  };
}
