// Benchmark of the analysis core on 1,000,000 fractional-frequency points.
// Run alone: npx tsx tests/bench/analysis.ts. Target: OADEV at all octave τ ≤ 80 ms.
import { pathToFileURL } from 'node:url';
import {
  compare,
  decimateMinMax,
  fitDrift,
  mdev,
  oadev,
  octaveMs,
  summarize,
} from '../../shared/analysis';
import { whiteFm } from '../helpers/random';

const N = 1_000_000;
const RUNS = 7;

interface Row {
  task: string;
  medianMs: number;
  minMs: number;
  target?: number;
}

function time(task: string, fn: () => unknown, target?: number): Row {
  fn(); // warm-up: JIT and the analysis workspace
  const ms: number[] = [];
  for (let i = 0; i < RUNS; i++) {
    const start = performance.now();
    fn();
    ms.push(performance.now() - start);
  }
  ms.sort((a, b) => a - b);
  return { task, medianMs: ms[RUNS >> 1], minMs: ms[0], target };
}

/** Prints median-of-7 timings of the main analysis paths on 1e6 points. */
export async function benchAnalysis(): Promise<void> {
  const y = whiteFm(N, 1e-11, 1);
  const t = new Float64Array(N);
  for (let i = 0; i < N; i++) t[i] = i;
  const oadevMs = octaveMs(N, 'oadev');
  // A comparison's cost does not depend on N: both budgets' lines and a few shared inputs.
  const line = (name: string, key?: string) => ({
    name,
    value: 1e-4,
    contribution: 1e-4,
    dof: 10,
    type: 'B' as const,
    distribution: 'normal' as const,
    key,
  });
  const side = (mean: number) => ({
    mean,
    u: 3e-4,
    components: ['a', 'b', 'c', 'd', 'e']
      .map((n) => line(n))
      .concat(line('ref', 'reference-offset')),
  });
  const deltaTerms = ['T0', 'B', 'bias', 'ageing'].map((name) => ({
    name,
    value: 1,
    unit: '°C',
    sensitivity: 1e-5,
    distribution: 'rectangular' as const,
    note: '',
  }));
  const mdevMs = octaveMs(N, 'mdev');
  const rows: Row[] = [
    time(`OADEV, ${oadevMs.length} octave τ, noise estimated`, () => oadev(y, 1, oadevMs), 80),
    time(
      `OADEV, ${oadevMs.length} octave τ, noise given`,
      () => oadev(y, 1, oadevMs, { noise: 'wfm' }),
      80,
    ),
    time(`MDEV, ${mdevMs.length} octave τ, noise estimated`, () => mdev(y, 1, mdevMs)),
    time('summarize (mean, sd, median, MAD, outliers)', () => summarize(y)),
    time('decimateMinMax to 2,000 buckets', () => decimateMinMax(t, y, 2000)),
    time('fitDrift linear (fit and detrended copy)', () => fitDrift(t, y, 'linear')),
    time('fitDrift quadratic (fit and detrended copy)', () => fitDrift(t, y, 'quadratic')),
    time('compare with 2 × 6 budget lines and 4 shared terms', () =>
      compare(side(0), side(1e-3), {
        limit: 1,
        limitUnit: 'ppm',
        nominal: 32768,
        sameReference: true,
        deltaTerms,
      }),
    ),
  ];
  console.log(
    `analysis benchmark: ${N.toLocaleString('en')} points, median of ${RUNS} runs after a warm-up`,
  );
  console.table(
    rows.map((r) => ({
      task: r.task,
      'median ms': Number(r.medianMs.toFixed(1)),
      'best ms': Number(r.minMs.toFixed(1)),
      target: r.target ? `≤ ${r.target} ms ${r.medianMs <= r.target ? 'met' : 'MISSED'}` : '',
    })),
  );
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  await benchAnalysis();
}
