import { http } from './http';
import { allPages } from './paging';

export type InstrumentKind = 'counter' | 'spi-bridge' | 'reference' | 'other';

/** How each instrument kind is named on screen. */
export const INSTRUMENT_KIND_LABELS: Record<InstrumentKind, string> = {
  counter: 'Counter',
  'spi-bridge': 'SPI bridge',
  reference: 'Reference',
  other: 'Other',
};

export function instrumentKindLabel(kind: string): string {
  return INSTRUMENT_KIND_LABELS[kind as InstrumentKind] ?? kind;
}

export interface Instrument {
  id: string | number;
  name: string;
  kind: InstrumentKind;
  maker: string | null;
  model: string | null;
  serial: string | null;
  calibrationDue: string | null;
  notes: string | null;
}

export interface Reference {
  id: string | number;
  name: string;
  nominalHz: number;
  fractionalOffset: number | null;
  standardUncertainty: number | null;
  verifiedBy: string | null;
  verifiedAt: string | null;
}

export async function listInstruments(): Promise<Instrument[]> {
  return allPages<Instrument>('/api/instruments', 'instruments');
}

export async function listReferences(): Promise<Reference[]> {
  return allPages<Reference>('/api/references', 'references');
}
