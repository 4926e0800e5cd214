import { http, request } from './http';
import { allPages } from './paging';
import type { Instrument, InstrumentKind } from './lab';
import type { LinkProfile } from '../../shared/protocol/linkProfile';

/** One instrument as GET /api/instruments/:id answers it: the lab list's fields, calibration state and link profile. */
export interface InstrumentDetail extends Omit<Instrument, 'id'> {
  id: number;
  calibrationState: 'ok' | 'due-soon' | 'overdue' | 'unknown';
  linkProfile: LinkProfile | null;
}

export interface InstrumentFields {
  name: string;
  kind: InstrumentKind;
  maker?: string | null;
  model?: string | null;
  serial?: string | null;
  calibrationDue?: string | null;
  notes?: string | null;
  counterType?: 'gated' | 'reciprocal' | 'time-interval' | null;
  counterResolution?: number | null;
}

export async function fetchInstrument(id: number): Promise<InstrumentDetail> {
  return (await http.get<{ instrument: InstrumentDetail }>(`/api/instruments/${id}`)).instrument;
}

/** Every instrument with its link profile (the lab list carries them). */
export async function listInstrumentsWithProfiles(): Promise<InstrumentDetail[]> {
  return allPages<InstrumentDetail>('/api/instruments', 'instruments');
}

export async function createInstrument(fields: InstrumentFields): Promise<InstrumentDetail> {
  return (await http.post<{ instrument: InstrumentDetail }>('/api/instruments', fields)).instrument;
}

export async function updateInstrument(id: number, patch: Partial<InstrumentFields>): Promise<InstrumentDetail> {
  return (await http.patch<{ instrument: InstrumentDetail }>(`/api/instruments/${id}`, patch)).instrument;
}

export async function saveLinkProfile(id: number, profile: LinkProfile): Promise<LinkProfile> {
  return (await request<{ linkProfile: LinkProfile }>('PUT', `/api/instruments/${id}/link-profile`, profile)).linkProfile;
}

export async function clearLinkProfile(id: number): Promise<void> {
  await http.delete<void>(`/api/instruments/${id}/link-profile`);
}
