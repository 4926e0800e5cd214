import { http } from './http';
import { allPages } from './paging';

export type StudyStatus = 'draft' | 'running' | 'in-review' | 'approved' | 'returned';

export interface StudySummary {
  id: string | number;
  title: string;
  process: string | null;
  description: string | null;
  status: StudyStatus;
  createdAt: string;
  checkpointCount: number;
  dutCount: number;
}

export interface StudyCreate {
  title: string;
  process?: string;
  description?: string;
  allowSimulated?: boolean;
}

export async function listStudies(): Promise<StudySummary[]> {
  return allPages<StudySummary>('/api/studies', 'studies');
}

export function createStudy(body: StudyCreate): Promise<StudySummary & Record<string, unknown>> {
  return http.post('/api/studies', body);
}
