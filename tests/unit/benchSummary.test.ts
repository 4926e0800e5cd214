import { describe, expect, it } from 'vitest';
import { summaryLines } from '../bench/summary.js';

// The closing table of `npm run bench` (tests/bench/summary.ts): columns padded to the widest
// cell, the verdict spelled met / NOT met / — (expected strings: common practice, no source).
describe('bench summary table', () => {
  it('lines up figure, measured, target, verdict and bench', () => {
    const lines = summaryLines([
      {
        figure: 'one stream / COPY',
        measured: '0.62',
        target: '≥ 0.50',
        met: true,
        bench: 'scale',
      },
      { figure: 'OADEV / numpy', measured: '0.65', target: '≤ 0.40', met: false, bench: 'scale' },
      { figure: 'pending store', measured: '240 → 70 ms', target: '—', met: null, bench: 'x' },
    ]);
    expect(lines).toEqual([
      'figure            | measured    | target | met     | bench',
      '------------------|-------------|--------|---------|------',
      'one stream / COPY | 0.62        | ≥ 0.50 | met     | scale',
      'OADEV / numpy     | 0.65        | ≤ 0.40 | NOT met | scale',
      'pending store     | 240 → 70 ms | —      | —       | x    ',
    ]);
  });
});
