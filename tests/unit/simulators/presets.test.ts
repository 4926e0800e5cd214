import { describe, expect, it } from 'vitest';
import { ManualClock } from '../../../simulators/clock';
import { SimCounter } from '../../../simulators/counter';
import { SimAccelerometer } from '../../../simulators/accelerometer';
import {
  COUNTER_PRESET_NAMES,
  presetAccel,
  presetCounter,
  type CheckpointIndex,
  type CounterPresetName,
} from '../../../simulators/presets';

/** Mean fractional offset (ppm) of a 300-reading capture, corrected for the reference. */
function capturePpm(name: CounterPresetName, cp: CheckpointIndex): number {
  const cfg = presetCounter(name, cp);
  const c = new SimCounter(cfg, new ManualClock());
  let sum = 0;
  for (let i = 0; i < 300; i++)
    sum += (c.nextReading().value * (1 + cfg.refOffset)) / cfg.oscillator.nominal - 1;
  return (sum / 300) * 1e6;
}

describe('Kestrel Bay demo presets', () => {
  // The demo's story (README, demo): limits ±1 ppm; only the tuning fork shifts.
  it.each(COUNTER_PRESET_NAMES.flatMap((n) => [1, 2, 3].map((cp) => [n, cp] as const)))(
    '%s at checkpoint %i moves as the story says',
    (name, cp) => {
      const delta = capturePpm(name, cp as CheckpointIndex) - capturePpm(name, 0);
      if (name === 'tf-32k' && cp >= 2) expect(Math.abs(delta - 2.5)).toBeLessThan(0.15);
      else expect(Math.abs(delta)).toBeLessThan(0.1);
    },
  );

  it('keeps the accelerometer bias put at every checkpoint', () => {
    const ref = new SimAccelerometer(presetAccel(0), new ManualClock()).expectedG();
    for (const cp of [1, 2, 3] as const) {
      const e = new SimAccelerometer(presetAccel(cp), new ManualClock()).expectedG();
      for (const a of ['x', 'y', 'z'] as const)
        expect(Math.abs(e[a] - ref[a]) * 1000).toBeLessThan(0.5);
    }
  });

  it('gives each capture its own but repeatable noise', () => {
    const a = new SimCounter(presetCounter('xtal-16m', 0), new ManualClock()).nextReading().value;
    const b = new SimCounter(presetCounter('xtal-16m', 0), new ManualClock()).nextReading().value;
    const c = new SimCounter(presetCounter('xtal-16m', 1), new ManualClock()).nextReading().value;
    expect(a).toBe(b);
    expect(a).not.toBe(c);
  });

  it('puts the tuning fork on its parabola: −0.136 ppm at 23 °C against 25 °C', () => {
    // B(T − T0)² = −0.034·(−2)² = −0.136 ppm (docs/references.md, tuning-fork formula; computed).
    const cfg = presetCounter('tf-32k', 0);
    cfg.oscillator.noise = {};
    cfg.oscillator.ambient.amplitudeC = 0;
    cfg.oscillator.agingPpbPerDay = 0;
    const r = new SimCounter(cfg, new ManualClock()).nextReading();
    expect(r.yTrue * 1e6 - cfg.oscillator.offsetPpm).toBeCloseTo(-0.136, 9);
  });
});
