/** Typed calls for the study routes; every shape is the contract's (shared/protocol). */
import { http } from './http';
import { allPages } from './paging';
import type { StudyCreate, StudySettings, StudyStatus } from '../../shared/protocol/api';
import type { StudyDetail, StudyRecord, StudySummary } from '../../shared/protocol/models';

export type { StudyCreate, StudyDetail, StudyRecord, StudyStatus, StudySummary };

export async function listStudies(): Promise<StudySummary[]> {
  return allPages<StudySummary>('/api/studies', 'studies');
}

/** GET /api/studies/:id: the study with its checkpoints and DUTs — the one call for it. */
export function getStudy(id: number): Promise<StudyDetail> {
  return http.get<StudyDetail>(`/api/studies/${id}`);
}

export function createStudy(body: StudyCreate): Promise<StudyDetail> {
  return http.post<StudyDetail>('/api/studies', body);
}

/** Changes a study's planner settings (PATCH /api/studies/:id/settings). */
export function updateStudySettings(studyId: number, body: StudySettings): Promise<StudyRecord> {
  return http.patch<StudyRecord>(`/api/studies/${studyId}/settings`, body);
}
