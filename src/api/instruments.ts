/**
 * An instrument's link profile, and the names the link pages use for the instrument calls. Each
 * endpoint has one function: reading, registering and editing an instrument live in
 * `equipment.ts`, the list in `lab.ts`; they are re-exported here under the link pages' names.
 */
import { request } from './http';
import type { LinkProfile } from '../../shared/protocol/linkProfile';
import type { InstrumentOut } from '../../shared/protocol/equipment';
import type { LinkProfileResponse } from '../../shared/protocol/responses';
import type { z } from 'zod';

/** One instrument with its link profile, as GET /api/instruments(/:id) answers it. */
export type InstrumentDetail = InstrumentOut;

export {
  fetchInstrumentRecord as fetchInstrument,
  registerInstrument as createInstrument,
  editInstrument as updateInstrument,
} from './equipment';
/** Every instrument with its link profile (the lab list carries them). */
export { listInstruments as listInstrumentsWithProfiles } from './lab';

export async function saveLinkProfile(id: number, profile: LinkProfile): Promise<LinkProfile> {
  const answer = await request<z.infer<typeof LinkProfileResponse>>(
    'PUT',
    `/api/instruments/${id}/link-profile`,
    profile,
  );
  return answer.linkProfile;
}

export async function clearLinkProfile(id: number): Promise<void> {
  await request<void>('DELETE', `/api/instruments/${id}/link-profile`);
}
