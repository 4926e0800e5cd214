// @vitest-environment happy-dom
import { beforeEach, describe, expect, it } from 'vitest';
import { createPinia, setActivePinia } from 'pinia';
import { BENCH_KEY, DEFAULT_CHOICES, useBenchStore } from '../../../src/stores/bench';
import { buildProfile, simulatorPresetFor } from '../../../src/composables/useLiveCapture';

describe('the bench store', () => {
  beforeEach(() => {
    localStorage.clear();
    setActivePinia(createPinia());
  });

  it('starts from the defaults', () => {
    const bench = useBenchStore();
    expect(bench.choices).toEqual(DEFAULT_CHOICES);
    expect(bench.site).toEqual({ latitudeDeg: 47, heightM: 300 });
  });

  it('remembers the last choices across page loads', () => {
    const bench = useBenchStore();
    bench.remember({ studyId: 3, dutId: 9, gateTime: 0.1, acceleration: 100, mode: 'query' });
    bench.choices.notes = 'fixture B';
    bench.setSite({ latitudeDeg: 51.5 });

    setActivePinia(createPinia()); // a fresh app reads localStorage again
    const again = useBenchStore();
    expect(again.choices).toMatchObject({
      studyId: 3,
      dutId: 9,
      gateTime: 0.1,
      acceleration: 100,
      mode: 'query',
      notes: 'fixture B',
    });
    expect(again.site).toEqual({ latitudeDeg: 51.5, heightM: 300 });
    expect(JSON.parse(localStorage.getItem(BENCH_KEY) ?? '{}').choices.dutId).toBe(9);
  });

  it('computes local gravity from the lab site (WGS84 normal gravity)', () => {
    const bench = useBenchStore();
    bench.setSite({ latitudeDeg: 45, heightM: 0 });
    // Somigliana at 45°: 9.806199… m/s² (NIMA TR8350.2 constants)
    expect(bench.localGravity).toBeCloseTo(9.8062, 4);
  });

  it('falls back to the defaults when the stored choices are unreadable', () => {
    localStorage.setItem(BENCH_KEY, '{not json');
    expect(useBenchStore().choices).toEqual(DEFAULT_CHOICES);
  });
});

describe('planning a capture', () => {
  it.each([
    [{ kind: 'crystal', nominal: 16e6 }, 'xtal-16m'],
    [{ kind: 'oscillator', nominal: 25e6 }, 'osc-25m'],
    [{ kind: 'tuning-fork', nominal: 32768 }, 'tf-32k'],
    [{ kind: 'tcxo', nominal: 12.8e6 }, 'tcxo-12m8'],
    [{ kind: 'accelerometer', nominal: 1000 }, 'accel'],
    [{ kind: 'resonator', nominal: 12.79e6 }, 'tcxo-12m8'],
  ])('plays %o with the simulator preset %s', (dut, preset) => {
    expect(simulatorPresetFor(dut)).toBe(preset);
  });

  it('builds a talk-only simulator counter profile with gate, checkpoint and time factor', () => {
    const p = buildProfile({
      linkKind: 'simulator',
      presetId: 'talk-counter',
      mode: 'talk',
      gateTime: 0.1,
      accelerometer: false,
      simulatorPreset: 'xtal-16m',
      checkpointIndex: 2,
      acceleration: 100,
    });
    expect(p.kind).toBe('simulator');
    expect(p.mode).toBe('talk');
    expect(p.simulator).toEqual({
      path: '/sim/counter',
      params: { mode: 'talk', preset: 'xtal-16m', checkpoint: '2', gate: '0.1', accel: '100' },
    });
  });

  it('builds the SPI bridge profile for an accelerometer with its orientation', () => {
    const p = buildProfile({
      linkKind: 'simulator',
      presetId: 'spi-bridge',
      mode: 'query',
      gateTime: 0.1,
      accelerometer: true,
      simulatorPreset: 'accel',
      checkpointIndex: 0,
      acceleration: 10,
      orientation: 'on-edge',
      gravity: 9.8076,
    });
    expect(p.parseRule).toBe('hex-spi');
    expect(p.intervalMs).toBe(10);
    expect(p.simulator?.path).toBe('/sim/spi-bridge');
    expect(p.simulator?.params).toMatchObject({
      preset: 'accel',
      orientation: 'edge',
      gravity: '9.807600',
    });
  });
});
