/**
 * What the captures list and the capture page need beyond the capture routes themselves:
 * study details (names of checkpoints and DUTs, cached per page load) and the baseline lookup
 * for "Compared with baseline".
 */
import { getStudy, type StudyDetail } from './studies';
import { listCaptures, type Capture } from './captures';
import type { CheckpointRecord, DutRecord } from '../../shared/protocol/models';

export type { StudyDetail };
export type StudyCheckpoint = CheckpointRecord;
export type StudyDut = DutRecord;

const studyCache = new Map<number, Promise<StudyDetail>>();

/** The study (getStudy), fetched once per page load (a failure is not cached). */
export function studyDetail(id: number): Promise<StudyDetail> {
  let hit = studyCache.get(id);
  if (!hit) {
    hit = getStudy(id);
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
export async function findBaseline(
  dutId: number,
  baselineCheckpointId: number,
): Promise<Capture | null> {
  const finished = await listCaptures({ dutId, state: 'finished' });
  return finished.find((c) => c.checkpointId === baselineCheckpointId) ?? null;
}
