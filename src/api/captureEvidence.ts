/**
 * What the captures list and the capture page need beyond the capture routes themselves:
 * study details (names of checkpoints and DUTs, cached per page load) and the baseline lookup
 * for "Compared with baseline".
 */
import { http } from './http';
import { listCaptures, type Capture, type CaptureDutRef } from './captures';

export interface StudyCheckpoint {
  id: number;
  name: string;
  order: number;
  exposure: unknown;
}

/** A DUT as the study lists it: the capture's DUT reference without the study id. */
export type StudyDut = Omit<CaptureDutRef, 'studyId'>;

export interface StudyDetail {
  id: number;
  title: string;
  status: string;
  checkpoints: StudyCheckpoint[];
  duts: StudyDut[];
}

const studyCache = new Map<number, Promise<StudyDetail>>();

/** GET /api/studies/:id, fetched once per page load (a failure is not cached). */
export function studyDetail(id: number): Promise<StudyDetail> {
  let hit = studyCache.get(id);
  if (!hit) {
    hit = http.get<StudyDetail>(`/api/studies/${id}`).then((s) => ({
      ...s,
      id: Number(s.id),
      checkpoints: s.checkpoints.map((c) => ({ ...c, id: Number(c.id) })),
      duts: s.duts.map((d) => ({ ...d, id: Number(d.id), nominal: Number(d.nominal) })),
    }));
    hit.catch(() => studyCache.delete(id));
    studyCache.set(id, hit);
  }
  return hit;
}

/** Forgets cached studies (tests; or after a study's plan changed). */
export function forgetStudies(): void {
  studyCache.clear();
}

/** The study's first checkpoint: the lowest order, then the lowest id. */
export function firstCheckpoint(study: StudyDetail): StudyCheckpoint | null {
  const sorted = [...study.checkpoints].sort((a, b) => a.order - b.order || a.id - b.id);
  return sorted[0] ?? null;
}

/**
 * The same DUT's finished capture at the study's first checkpoint (the newest when several),
 * or null when there is none yet.
 */
export async function findBaseline(dutId: number, baselineCheckpointId: number): Promise<Capture | null> {
  const finished = await listCaptures({ dutId, state: 'finished' });
  return finished.find((c) => Number(c.checkpointId) === baselineCheckpointId) ?? null;
}
