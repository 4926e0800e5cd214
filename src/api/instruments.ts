/**
 * An instrument's link profile, and the names the link pages use for the instrument calls. Each
 * endpoint has one function: reading, registering and editing an instrument live in
 * `equipment.ts`, the list in `lab.ts`; they are re-exported here under the link pages' names.
 */
import { callRoute } from './http';
import type { LinkProfile } from '../../shared/protocol/linkProfile';
import type { InstrumentOut } from '../../shared/protocol/equipment';

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
  return (await callRoute('PUT /api/instruments/:id/link-profile', { id }, { body: profile }))
    .linkProfile;
}

export async function clearLinkProfile(id: number): Promise<void> {
  await callRoute('DELETE /api/instruments/:id/link-profile', { id });
}
