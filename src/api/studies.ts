/** Typed calls for the study routes; every shape is the contract's (shared/protocol). */
import { callRoute } from './http';
import { allPages } from './paging';
import type { StudyCreate, StudySettings, StudyStatus } from '../../shared/protocol/api';
import type { StudyDetail, StudyRecord, StudySummary } from '../../shared/protocol/models';

export type { StudyCreate, StudyDetail, StudyRecord, StudyStatus, StudySummary };

export async function listStudies(): Promise<StudySummary[]> {
  return allPages<StudySummary>('/api/studies', 'studies');
}

/** GET /api/studies/:id: the study with its checkpoints and DUTs — the one call for it. */
export function getStudy(id: number): Promise<StudyDetail> {
  return callRoute('GET /api/studies/:id', { id });
}

export function createStudy(body: StudyCreate): Promise<StudyDetail> {
  return callRoute('POST /api/studies', {}, { body });
}

/** Changes a study's planner settings (PATCH /api/studies/:id/settings). */
export function updateStudySettings(studyId: number, body: StudySettings): Promise<StudyRecord> {
  return callRoute('PATCH /api/studies/:id/settings', { id: studyId }, { body });
}
