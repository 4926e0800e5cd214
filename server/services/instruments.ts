import { Instrument } from '../models/index.js';
import { NotFoundError } from '../errors.js';
import { audit } from './audit.js';
import { pageOf } from './paging.js';
import type { Page } from '../../shared/protocol/paging.js';
import { calibrationStatus } from './calibration.js';
import type { LinkProfile } from '../../shared/protocol/linkProfile.js';

/** What the API shows of an instrument, in the list and on its own. */
export function publicInstrument(i: Instrument) {
  return {
    id: i.id,
    name: i.name,
    kind: i.kind,
    maker: i.maker,
    model: i.model,
    serial: i.serial,
    calibrationDue: i.calibrationDue,
    calibrationState: calibrationStatus(i).state,
    calibration: calibrationStatus(i),
    awaySince: i.awaySince ?? null,
    retiredAt: i.retiredAt ? i.retiredAt.toISOString() : null,
    retiredReason: i.retiredReason ?? null,
    notes: i.notes,
    linkProfile: (i.linkProfile as LinkProfile | null) ?? null,
    counterType: i.counterType ?? null,
    counterResolution: i.counterResolution ?? null,
  };
}

/** GET /api/instruments: one page of instruments, by name. */
export async function listInstruments(page: Page) {
  const { rows, nextCursor } = await pageOf(Instrument, page, 'name-asc');
  return { instruments: rows.map(publicInstrument), nextCursor };
}

export interface InstrumentFields {
  name: string;
  kind: Instrument['kind'];
  maker?: string | null;
  model?: string | null;
  serial?: string | null;
  calibrationDue?: string | null;
  notes?: string | null;
  counterType?: Instrument['counterType'];
  counterResolution?: number | null;
}

async function find(id: number): Promise<Instrument> {
  const instrument = await Instrument.findByPk(id);
  if (!instrument) throw new NotFoundError('Instrument');
  return instrument;
}

export async function findInstrument(id: number): Promise<Instrument> {
  return find(id);
}

export async function getInstrument(id: number) {
  return publicInstrument(await find(id));
}

/** Registers an instrument (a lab's own counter, bridge, reference…); audited. */
export async function createInstrument(input: InstrumentFields, actorId: number) {
  // The instrument and its audit event are one transaction: both are kept, or neither.
  const instrument = await Instrument.sequelize!.transaction(async (transaction) => {
    const created = await Instrument.create(
      {
        name: input.name,
        kind: input.kind,
        maker: input.maker ?? null,
        model: input.model ?? null,
        serial: input.serial ?? null,
        calibrationDue: input.calibrationDue ?? null,
        notes: input.notes ?? null,
        counterType: input.counterType ?? null,
        counterResolution: input.counterResolution ?? null,
      },
      { transaction },
    );
    await audit(
      actorId,
      'instrument.create',
      'instrument',
      created.id,
      { name: input.name, kind: input.kind },
      transaction,
    );
    return created;
  });
  return publicInstrument(instrument);
}

/** Changes an instrument's registration fields; the audit event lists the fields changed. */
export async function updateInstrument(
  id: number,
  patch: Partial<InstrumentFields>,
  actorId: number,
) {
  const instrument = await find(id);
  const changed: Record<string, { from: unknown; to: unknown }> = {};
  for (const key of [
    'name',
    'kind',
    'maker',
    'model',
    'serial',
    'calibrationDue',
    'notes',
    'counterType',
    'counterResolution',
  ] as const) {
    if (patch[key] === undefined) continue;
    const before = instrument.get(key) as unknown;
    if (before !== patch[key]) changed[key] = { from: before, to: patch[key] };
    instrument.set(key, patch[key]);
  }
  await Instrument.sequelize!.transaction(async (transaction) => {
    await instrument.save({ transaction });
    if (Object.keys(changed).length > 0)
      await audit(actorId, 'instrument.update', 'instrument', id, changed, transaction);
  });
  return publicInstrument(instrument);
}

/** Stores the link profile the bench and the link page offer for this instrument. */
export async function saveLinkProfile(
  id: number,
  profile: LinkProfile,
  actorId: number,
): Promise<LinkProfile> {
  const instrument = await find(id);
  const had = instrument.linkProfile != null;
  instrument.linkProfile = profile;
  await Instrument.sequelize!.transaction(async (transaction) => {
    await instrument.save({ transaction });
    await audit(
      actorId,
      had ? 'instrument.link-profile.replace' : 'instrument.link-profile.set',
      'instrument',
      id,
      { name: profile.name, kind: profile.kind, mode: profile.mode },
      transaction,
    );
  });
  return profile;
}

export async function clearLinkProfile(id: number, actorId: number): Promise<void> {
  const instrument = await find(id);
  if (instrument.linkProfile == null) return;
  instrument.linkProfile = null;
  await Instrument.sequelize!.transaction(async (transaction) => {
    await instrument.save({ transaction });
    await audit(actorId, 'instrument.link-profile.clear', 'instrument', id, undefined, transaction);
  });
}
