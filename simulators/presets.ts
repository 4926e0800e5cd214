/**
 * The demo DUTs of the "Kestrel Bay Assembly" study (README, demo): what the simulator plays when
 * a session asks for `preset=<name>&checkpoint=<0..3>`. Exactly one part shifts: the 32.768 kHz
 * tuning fork, by about +2.5 ppm from the over-exposure on (checkpoint ≥ 2). Every other
 * crystal and oscillator moves by less than ±0.1 ppm, and the accelerometer's bias stays put.
 * To change the story, edit `shiftPpm` / `biasShiftMg` below.
 *
 * Numbers are invented for a plausible demo (common practice, no source): they describe no real
 * part. Noise levels are σ_y at τ = 1 s.
 */
import { DEFAULT_AMBIENT, type OscillatorConfig, type TemperatureResponse } from './oscillator';
import type { NoiseLevels } from './noise';
import type { CounterConfig } from './counter';
import { G_N } from '../shared/analysis/gravity';
import { ORIENTATIONS, type AccelConfig, type Vec3 } from './accelerometer';

export const CHECKPOINTS = ['baseline', 'after wash', 'after over-exposure', 'after bake'] as const;
export type CheckpointIndex = 0 | 1 | 2 | 3;

export const COUNTER_PRESET_NAMES = ['xtal-16m', 'osc-25m', 'tf-32k', 'tcxo-12m8'] as const;
export type CounterPresetName = (typeof COUNTER_PRESET_NAMES)[number];
export const PRESET_NAMES = [...COUNTER_PRESET_NAMES, 'accel'] as const;
export type PresetName = (typeof PRESET_NAMES)[number];

export interface CounterPreset {
  label: string;
  nominal: number;
  offsetPpm: number;
  noise: NoiseLevels;
  agingPpbPerDay: number;
  temperature: TemperatureResponse;
  /** Added to offsetPpm at each checkpoint (index 0–3). */
  shiftPpm: readonly [number, number, number, number];
}

export const COUNTER_PRESETS: Record<CounterPresetName, CounterPreset> = {
  'xtal-16m': {
    label: '16 MHz crystal, Pierce oscillator',
    nominal: 16e6,
    offsetPpm: 3.2,
    noise: { wfm: 4e-10, ffm: 2e-10, wpm: 5e-11 },
    agingPpbPerDay: 1,
    temperature: { kind: 'linear', ppmPerC: 0.08, refC: 23 },
    shiftPpm: [0, 0.02, -0.04, -0.01],
  },
  'osc-25m': {
    label: '25 MHz oscillator module',
    nominal: 25e6,
    offsetPpm: -4.1,
    noise: { wfm: 3e-10, ffm: 1.5e-10, wpm: 5e-11 },
    agingPpbPerDay: 2,
    temperature: { kind: 'linear', ppmPerC: 0.05, refC: 23 },
    shiftPpm: [0, -0.01, 0.03, 0.02],
  },
  'tf-32k': {
    label: '32.768 kHz tuning-fork crystal',
    nominal: 32768,
    offsetPpm: 6.5,
    noise: { wfm: 2e-9, ffm: 1e-9, wpm: 3e-10 },
    agingPpbPerDay: 5,
    // Tuning-fork parabola, B = −0.034 ppm/°C², T0 = 25 °C (docs/references.md, "Crystals and temperature").
    temperature: { kind: 'parabolic', bPpmPerC2: -0.034, t0C: 25 },
    shiftPpm: [0, 0.05, 2.5, 2.45],
  },
  'tcxo-12m8': {
    label: '12.8 MHz TCXO',
    nominal: 12.8e6,
    offsetPpm: 0.35,
    noise: { wfm: 6e-11, ffm: 3e-11, wpm: 2e-11 },
    agingPpbPerDay: 0.3,
    temperature: { kind: 'linear', ppmPerC: 0.002, refC: 23 },
    shiftPpm: [0, 0.005, -0.008, 0.003],
  },
};

export interface AccelPreset {
  label: string;
  noiseMg: number;
  biasMg: Vec3;
  sensErrPct: Vec3;
  /** Added to the bias at each checkpoint (index 0–3): zero, the part does not shift. */
  biasShiftMg: readonly [Vec3, Vec3, Vec3, Vec3];
}

const ZERO: Vec3 = { x: 0, y: 0, z: 0 };

export const ACCEL_PRESET: AccelPreset = {
  label: '3-axis accelerometer',
  noiseMg: 1.2,
  biasMg: { x: 4.2, y: -2.7, z: 6.1 },
  sensErrPct: { x: 0.3, y: -0.2, z: 0.4 },
  biasShiftMg: [ZERO, ZERO, ZERO, ZERO],
};

/** A stable seed per preset and checkpoint, so each capture is a different, repeatable realisation. */
export function presetSeed(name: string, checkpoint: number): number {
  let h = 0x811c9dc5; // FNV-1a
  for (const ch of `${name}#${checkpoint}`) h = Math.imul(h ^ ch.charCodeAt(0), 0x01000193) >>> 0;
  return h;
}

/** The oscillator of a counter preset at a checkpoint (σ levels at τ = 1 s). */
export function presetOscillator(
  name: CounterPresetName,
  checkpoint: CheckpointIndex,
): OscillatorConfig {
  const p = COUNTER_PRESETS[name];
  return {
    nominal: p.nominal,
    offsetPpm: p.offsetPpm + p.shiftPpm[checkpoint],
    noise: { ...p.noise },
    noiseTau: 1,
    agingPpbPerDay: p.agingPpbPerDay,
    temperature: { ...p.temperature },
    ambient: { ...DEFAULT_AMBIENT },
    scenario: { kind: 'none' },
  };
}

/** A whole counter session for a preset: 1 s gate, no dead time, a reference locked to GPS. */
export function presetCounter(name: CounterPresetName, checkpoint: CheckpointIndex): CounterConfig {
  return {
    oscillator: presetOscillator(name, checkpoint),
    gate: 1,
    deadTime: 0,
    // A settled GPS-disciplined reference: about 1e-11 or better (common practice, no source).
    refOffset: 2e-12,
    accel: 1,
    garble: 0.002,
    seed: presetSeed(name, checkpoint),
    mode: 'query',
  };
}

/** The accelerometer at a checkpoint, lying flat. */
export function presetAccel(checkpoint: CheckpointIndex): AccelConfig {
  const p = ACCEL_PRESET;
  const s = p.biasShiftMg[checkpoint];
  return {
    orientation: { ...ORIENTATIONS.flat },
    noiseMg: p.noiseMg,
    biasMg: { x: p.biasMg.x + s.x, y: p.biasMg.y + s.y, z: p.biasMg.z + s.z },
    sensErrPct: { ...p.sensErrPct },
    localGravity: G_N,
    biasStep: null,
    accel: 1,
    seed: presetSeed('accel', checkpoint),
  };
}
