import { ref } from 'vue';
import { getStudy, listStudies, type StudySummary } from '../api/studies';
import { listInstruments, listReferences, type Instrument, type Reference } from '../api/lab';
import type { BenchStudy } from '../utils/benchPlanning';
import {
  benchStudyOf,
  capturableStudies,
  offeredInstruments,
  offeredReferences,
} from '../utils/benchOffer';

/**
 * What the bench's setup form chooses from, loaded from the API: the studies that take captures,
 * the instruments and references in service (retired ones stay on record but are never offered)
 * and the chosen study with its DUTs and checkpoints (archived ones left out). Loading flags and
 * the first failure's message are kept for the form to show. Unit-tested with its API calls mocked
 * in tests/unit/client/benchOptions.test.ts.
 */
export function useBenchOptions() {
  const studies = ref<StudySummary[]>([]);
  const instruments = ref<Instrument[]>([]);
  const references = ref<Reference[]>([]);
  const study = ref<BenchStudy | null>(null);
  const loading = ref(false);
  const loadingStudy = ref(false);
  const loadError = ref<string | null>(null);
  /** Counts study loads, so an answer overtaken by a later choice is dropped. */
  let studyLoads = 0;

  function failed(err: unknown): void {
    loadError.value = err instanceof Error ? err.message : String(err);
  }

  /** Loads the lists the form offers; false (with `loadError` set) when one of them failed. */
  async function loadOptions(): Promise<boolean> {
    loading.value = true;
    try {
      const [s, i, r] = await Promise.all([listStudies(), listInstruments(), listReferences()]);
      studies.value = capturableStudies(s);
      instruments.value = offeredInstruments(i);
      references.value = offeredReferences(r);
      return true;
    } catch (err) {
      failed(err);
      return false;
    } finally {
      loading.value = false;
    }
  }

  /**
   * Loads a study (none for null): returns it as offered, or null when there is none, the load
   * failed (`loadError` says why) or a later call overtook this one.
   */
  async function loadStudy(id: number | null): Promise<BenchStudy | null> {
    const mine = ++studyLoads;
    study.value = null;
    if (!id) {
      loadingStudy.value = false;
      return null;
    }
    loadingStudy.value = true;
    try {
      const s = benchStudyOf(await getStudy(id));
      if (mine !== studyLoads) return null;
      study.value = s;
      return s;
    } catch (err) {
      if (mine === studyLoads) failed(err);
      return null;
    } finally {
      if (mine === studyLoads) loadingStudy.value = false;
    }
  }

  return {
    studies,
    instruments,
    references,
    study,
    loading,
    loadingStudy,
    loadError,
    loadOptions,
    loadStudy,
  };
}
