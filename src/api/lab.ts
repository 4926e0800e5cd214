import { callRoute } from './http';
import { allPages } from './paging';
import {
  COUNTER_TYPES,
  REFERENCE_KINDS,
  type ReferenceCreate,
  type ReferencePatch,
} from '../../shared/protocol/uncertainty';
import type { InstrumentKind, InstrumentOut, ReferenceOut } from '../../shared/protocol/equipment';

export type { InstrumentKind };

/** How each instrument kind is named on screen. */
export const INSTRUMENT_KIND_LABELS: Record<InstrumentKind, string> = {
  counter: 'Counter',
  'spi-bridge': 'SPI bridge',
  reference: 'Reference',
  thermometer: 'Thermometer',
  other: 'Other',
};

export function instrumentKindLabel(kind: string): string {
  return INSTRUMENT_KIND_LABELS[kind as InstrumentKind] ?? kind;
}

/** An instrument as the API answers it (shared/protocol/equipment.ts: the server's calibration state included). */
export type Instrument = InstrumentOut;

export type CounterType = (typeof COUNTER_TYPES)[number];
export type ReferenceKind = (typeof REFERENCE_KINDS)[number];
export { COUNTER_TYPES, REFERENCE_KINDS };

export const COUNTER_TYPE_LABELS: Record<CounterType, string> = {
  gated: 'Gated (±1 count)',
  reciprocal: 'Reciprocal',
  'time-interval': 'Time-interval',
};

export const REFERENCE_KIND_LABELS: Record<ReferenceKind, string> = {
  'gnss-disciplined': 'GNSS-disciplined',
  rubidium: 'Rubidium',
  ocxo: 'OCXO',
  'internal-timebase': 'Internal timebase',
  other: 'Other',
};

/** "reciprocal, 100 ps" / "gated, ±1 count" / "not recorded". */
export function counterText(i: Pick<Instrument, 'counterType' | 'counterResolution'>): string {
  if (!i.counterType) return 'not recorded';
  if (i.counterType === 'gated') return `gated, ±${i.counterResolution ?? 1} count`;
  const r = i.counterResolution;
  return r ? `${i.counterType}, ${Number((r * 1e12).toPrecision(3))} ps` : i.counterType;
}

/** A frequency reference as the API answers it (shared/protocol/equipment.ts). */
export type Reference = ReferenceOut;

/** POST /api/references (admin, lead; audited). */
export async function createReference(body: ReferenceCreate): Promise<Reference> {
  return (await callRoute('POST /api/references', {}, { body })).reference;
}

/** PATCH /api/references/:id (admin, lead; audited). */
export async function updateReference(id: number, patch: ReferencePatch): Promise<Reference> {
  return (await callRoute('PATCH /api/references/:id', { id }, { body: patch })).reference;
}

export async function listInstruments(): Promise<Instrument[]> {
  return allPages<Instrument>('/api/instruments', 'instruments');
}

export async function listReferences(): Promise<Reference[]> {
  return allPages<Reference>('/api/references', 'references');
}
