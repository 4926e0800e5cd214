import { shallowRef, ref, watch, type Ref } from 'vue';
import { fitNoiseModel, typicalModel, type NoiseModel } from '../../shared/analysis/planner';
import { unitFactor } from '../../shared/protocol/parse';
import { getAnalysis, type CaptureDutRef } from '../api/captures';
import { getStudyMatrix, inOrder } from '../api/studyPlan';
import { curveScale, isFrequencyUnit, limitInCurveUnits } from '../utils/plan';

/** What the planner and the bench's live decision work from, all in curve units. */
export interface PlanBasis {
  model: NoiseModel;
  /** The baseline capture the model was measured on, or null (typical curve). */
  baselineId: number | null;
  /** Baseline mean in the DUT's unit, and its standard uncertainty in curve units. */
  baselineMean: number | null;
  baselineU: number | null;
  /** Inputs that do not average (type B lines of the baseline's budget), curve units. */
  fixedU: number;
  /** Limit half-width in curve units, null when the DUT has none. */
  limit: number | null;
  /** 1 DUT-unit in curve units (1/nominal for frequency). */
  scale: number;
  frequency: boolean;
  /** The study's first checkpoint (the baseline's), null when the study has none. */
  baselineCheckpointId: number | null;
}

/**
 * Loads a DUT's planning basis: its baseline (latest finished capture at the study's first
 * checkpoint) with the curve, mean and budget the server computed, or the part kind's typical
 * curve when there is no baseline yet.
 */
export function usePlanBasis(dut: Ref<CaptureDutRef | null>, studyId: Ref<number | null>) {
  const basis = shallowRef<PlanBasis | null>(null);
  const loading = ref(false);
  const error = ref<unknown>(null);
  let generation = 0;

  async function load() {
    const mine = ++generation;
    const d = dut.value;
    const sid = studyId.value;
    basis.value = null;
    error.value = null;
    if (!d || !sid) return;
    loading.value = true;
    try {
      const frequency = isFrequencyUnit(d.unit);
      const scale = curveScale(d);
      const limit = limitInCurveUnits(d);
      const matrix = await getStudyMatrix(sid);
      const first = inOrder(matrix.checkpoints)[0];
      const row = matrix.rows.find((r) => r.dut.id === d.id);
      const baselineId = first
        ? (row?.cells.find((c) => c.checkpointId === first.id)?.capture?.id ?? null)
        : null;
      let next: PlanBasis;
      const analysis = baselineId ? await getAnalysis(baselineId) : null;
      const points = analysis?.stability.points ?? [];
      if (analysis && analysis.stats && points.length >= 2) {
        const model = fitNoiseModel(points.map((p) => ({ tau: p.tau, dev: p.dev, edf: p.edf })));
        const b = analysis.uncertainty;
        const fixed = b
          ? Math.sqrt(
              b.components
                .filter((c) => c.type === 'B')
                .reduce((s, c) => s + c.contribution ** 2, 0),
            )
          : 0;
        const u = b?.combined ?? analysis.stats.sem;
        next = {
          model,
          baselineId,
          baselineMean: analysis.stats.mean,
          baselineU: u * scale,
          fixedU: fixed * scale,
          limit,
          scale,
          frequency,
          baselineCheckpointId: first?.id ?? null,
        };
      } else {
        // Typical curves are fractional for frequency parts and in g for accelerometers.
        const typical = typicalModel(d.kind);
        const f = frequency ? 1 : (unitFactor('g') ?? 1) / (unitFactor(d.unit) ?? 1);
        next = {
          model: { ...typical, a: typical.a * f * f, floor: typical.floor * f },
          baselineId: null,
          baselineMean: null,
          baselineU: null,
          fixedU: 0,
          limit,
          scale,
          frequency,
          baselineCheckpointId: first?.id ?? null,
        };
      }
      if (mine === generation) basis.value = next;
    } catch (err) {
      if (mine === generation) error.value = err;
    } finally {
      if (mine === generation) loading.value = false;
    }
  }

  watch(
    () => [dut.value?.id, studyId.value],
    () => void load(),
    { immediate: true },
  );
  return { basis, loading, error, reload: load };
}
