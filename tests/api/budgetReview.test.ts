// Findings of the independent review of issue 8 that could turn an honest "inconclusive" into a
// false "within" in a capture's own budget: an unknown counter, an unsupported noise label, and an
// Allan deviation taken at the longest octave τ instead of at the span.
import { describe, expect, it } from 'vitest';
import { gaussian, randomWalkFm } from '../helpers/random.js';
import { useDemoApp } from '../helpers/demoApp.js';

const demo = useDemoApp({ ambientC: 23 });

/** A finished capture of the demo tuning fork (1 s gate, 23 °C) reading `values`; its analysis. */
async function finishedCapture(values: number[], extra: Record<string, unknown> = {}) {
  const readings = values.map((value, seq) => ({ seq, t: seq, value }));
  const id = await demo.recordCapture(readings, { dutId: demo.ids.tuningFork.id, ...extra });
  const analysis = await demo.call('technician', 'get', `/api/captures/${id}/analysis?drift=none`);
  expect(analysis.status).toBe(200);
  return analysis.body;
}

type Line = { key?: string; name: string; value: number; dof: number | null };

describe('a capture whose counter is not recorded', () => {
  it('books ±1 count in the gate when every reading is identical, so U cannot collapse', async () => {
    // 32 768 Hz read 50 times as exactly 32 768: a gated counter at 1 s shows the same count
    // whatever the part does within ±1 Hz (REFERENCES: general counter theory, ±1/t_gate).
    const a = await finishedCapture(Array(50).fill(32_768));
    const res = (a.uncertainty.components as Line[]).find((l) => /resolution/i.test(l.name))!;
    expect(res.value).toBeCloseTo(1 / Math.sqrt(3), 6); // a = 1 Hz, rectangular a/√3 (JCGM 100 §4.3.7)
    expect(a.uncertainty.expanded).toBeGreaterThan(1);
    expect(a.notes.join(' ')).toMatch(/identical/);
  });

  it('books one display step of the readings when they resolve only whole hertz', async () => {
    const g = gaussian(3);
    const a = await finishedCapture(
      Array.from({ length: 200 }, () => 32_768 + Math.round(2 * g())),
    );
    const res = (a.uncertainty.components as Line[]).find((l) => /resolution/i.test(l.name))!;
    expect(res.value).toBeCloseTo(1 / Math.sqrt(3), 6); // step 1 Hz inferred from the data
  });
});

describe('the type A term of a noisy capture', () => {
  it('never takes s/√n on a noise label the slope does not support, and carries σ_y to the span', async () => {
    // Random-walk FM of 1e-9 per step around the tuning fork: s/√n badly understates the
    // uncertainty of the mean (SP 1065 §1.6); the budget must use the long-term instability.
    const y = randomWalkFm(1000, 1e-9, 17);
    const a = await finishedCapture(Array.from(y, (v) => 32_768 * (1 + v)));
    const typeA = (a.uncertainty.components as Line[]).find((l) => l.key === 'type-a')!;
    expect(typeA.name).toMatch(/Long-term/);
    const last = a.stability.points[a.stability.points.length - 1];
    // the longest octave τ is 256 s of a 1000 s span: carried with +1/2 (SP 1065 Table 3, RWFM)
    expect(typeA.value).toBeGreaterThan(last.dev * 32_768 * 1.5);
  });
});
