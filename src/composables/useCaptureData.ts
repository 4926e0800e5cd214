import { computed, ref, shallowRef, watch } from 'vue';
import {
  getAnalysis,
  getCapture,
  type CaptureAnalysis,
  type DriftModel,
  type StabilityKind,
} from '../api/captures';
import { useResource } from './useResource';
import { seriesColour } from './useUplot';
import type { StabilitySeries } from '../components/StabilityPlot.vue';

/**
 * What the capture page loads: the capture, its analysis for the chosen deviation, τ set and drift
 * model (the latest request wins), and — once "Compared with baseline" names the baseline — the
 * baseline's stability curve for the same deviation and τ set, to overlay.
 */
export function useCaptureData(id: () => number) {
  const capture = useResource(() => getCapture(id()));
  const kind = ref<StabilityKind>('oadev');
  const taus = ref<'octave' | 'decade' | 'all'>('octave');
  /** Drift removed before stability and the budget; unset = the server's default (linear for frequency, none otherwise). */
  const drift = ref<DriftModel | undefined>(undefined);
  const analysis = shallowRef<CaptureAnalysis | null>(null);
  const analysisLoading = ref(false);
  const analysisError = shallowRef<unknown>(null);
  const driftChoice = computed<DriftModel>({
    get: () => drift.value ?? analysis.value?.driftModel ?? 'linear',
    set: (v) => {
      drift.value = v;
    },
  });
  let analysisGeneration = 0;

  async function loadAnalysis(): Promise<void> {
    const mine = ++analysisGeneration;
    analysisLoading.value = true;
    analysisError.value = null;
    try {
      const result = await getAnalysis(id(), {
        kind: kind.value,
        taus: taus.value,
        drift: drift.value,
      });
      if (mine === analysisGeneration) analysis.value = result;
    } catch (cause) {
      if (mine === analysisGeneration) analysisError.value = cause;
    } finally {
      if (mine === analysisGeneration) analysisLoading.value = false;
    }
  }

  const baseline = shallowRef<{ id: number; checkpoint: string } | null>(null);
  const baselineAnalysis = shallowRef<{
    id: number;
    kind: StabilityKind;
    taus: string;
    result: CaptureAnalysis;
  } | null>(null);
  let baselineGeneration = 0;

  async function loadBaselineAnalysis(): Promise<void> {
    const mine = ++baselineGeneration;
    const b = baseline.value;
    if (!b) {
      baselineAnalysis.value = null;
      return;
    }
    const wanted = { id: b.id, kind: kind.value, taus: taus.value };
    try {
      const result = await getAnalysis(b.id, { kind: wanted.kind, taus: wanted.taus });
      if (mine === baselineGeneration) baselineAnalysis.value = { ...wanted, result };
    } catch {
      // Without the baseline's curve the plot shows this capture alone.
      if (mine === baselineGeneration) baselineAnalysis.value = null;
    }
  }

  /** Called by "Compared with baseline" once it knows the baseline (null while there is none). */
  function onBaseline(found: { id: number; checkpoint: string } | null): void {
    if (found?.id === baseline.value?.id) return;
    baseline.value = found;
    void loadBaselineAnalysis();
  }

  const stabilitySeries = computed<StabilitySeries[]>(() => {
    const a = analysis.value;
    if (!a) return [];
    const b = baselineAnalysis.value;
    const overlay =
      b &&
      b.id === baseline.value?.id &&
      b.kind === a.stability.kind &&
      b.kind === kind.value &&
      b.taus === taus.value
        ? b.result.stability.points
        : [];
    if (!b || overlay.length === 0)
      return [{ label: `capture ${id()}`, points: a.stability.points }];
    return [
      {
        label: `baseline · capture ${b.id}`,
        points: overlay,
        colour: seriesColour(0),
        dashed: true,
      },
      {
        label: `this capture · capture ${id()}`,
        points: a.stability.points,
        colour: seriesColour(1),
      },
    ];
  });
  const shownKind = computed<StabilityKind>(() => analysis.value?.stability.kind ?? kind.value);

  void loadAnalysis();
  watch(id, () => {
    void capture.reload();
    void loadAnalysis();
  });
  watch(drift, () => void loadAnalysis());
  watch([kind, taus], () => {
    void loadAnalysis();
    void loadBaselineAnalysis();
  });

  return {
    capture,
    kind,
    taus,
    drift,
    driftChoice,
    analysis,
    analysisLoading,
    analysisError,
    loadAnalysis,
    baseline,
    onBaseline,
    stabilitySeries,
    shownKind,
  };
}
