/**
 * The oscillator a simulated counter measures: its fractional frequency y(t) as the sum of a
 * fixed offset, linear aging, a temperature response to a slowly varying ambient, a scenario
 * (step or ramp), and power-law noise. Pure; time is simulated seconds since power-on.
 */
import { FrequencyNoise, type NoiseLevels, type Rng } from './noise';

export type TemperatureResponse =
  /** Δf/f = ppmPerC·(T − refC) ppm: a straight-line tempco. */
  | { kind: 'linear'; ppmPerC: number; refC: number }
  /** Δf/f = B·(T − T0)² ppm: the tuning-fork parabola (docs/references.md, "Crystals and temperature"). */
  | { kind: 'parabolic'; bPpmPerC2: number; t0C: number };

/** Ambient °C = meanC + amplitudeC·sin(2πt/periodS): a lab's slow air-conditioning swing. */
export interface Ambient {
  meanC: number;
  amplitudeC: number;
  periodS: number;
}

export type Scenario =
  | { kind: 'none' }
  | { kind: 'step'; ppm: number; afterS: number }
  | { kind: 'ramp'; ppmPerHour: number; afterS: number };

export interface OscillatorConfig {
  nominal: number;
  offsetPpm: number;
  /** Noise levels as σ_y at τ = `noiseTau` seconds. */
  noise: NoiseLevels;
  noiseTau: number;
  agingPpbPerDay: number;
  temperature: TemperatureResponse;
  ambient: Ambient;
  scenario: Scenario;
}

export const DEFAULT_AMBIENT: Ambient = { meanC: 23, amplitudeC: 0.2, periodS: 1200 };

/** Ambient temperature at simulated time t (s). */
export function ambientC(a: Ambient, t: number): number {
  return a.meanC + a.amplitudeC * Math.sin((2 * Math.PI * t) / a.periodS);
}

/** Temperature contribution to y, as a fraction. */
export function temperatureY(r: TemperatureResponse, tempC: number): number {
  if (r.kind === 'linear') return r.ppmPerC * (tempC - r.refC) * 1e-6;
  const d = tempC - r.t0C;
  return r.bPpmPerC2 * d * d * 1e-6;
}

/** Scenario contribution to y at time t (s), as a fraction. */
export function scenarioY(s: Scenario, t: number): number {
  if (s.kind === 'step') return t >= s.afterS ? s.ppm * 1e-6 : 0;
  if (s.kind === 'ramp') return t > s.afterS ? (s.ppmPerHour * (t - s.afterS) * 1e-6) / 3600 : 0;
  return 0;
}

/**
 * Rescales noise levels given at τ = from to τ = to, following each type's ADEV slope
 * (NIST SP 1065 Table 3: PM ∝ τ^−1, white FM τ^−1/2, flicker FM τ^0, random-walk FM τ^+1/2).
 */
export function rescaleNoise(levels: NoiseLevels, from: number, to: number): NoiseLevels {
  const r = from / to;
  return {
    wpm: (levels.wpm ?? 0) * r,
    fpm: (levels.fpm ?? 0) * r,
    wfm: (levels.wfm ?? 0) * Math.sqrt(r),
    ffm: levels.ffm ?? 0,
    rwfm: (levels.rwfm ?? 0) / Math.sqrt(r),
  };
}

export interface GateSample {
  /** Mean fractional frequency of the DUT over the gate (without the counter's reference). */
  y: number;
  /** Ambient temperature at mid-gate, °C. */
  tempC: number;
}

/** A running oscillator: one `sample` per gate, noise drawn in gate-sized steps. */
export class Oscillator {
  private noise: FrequencyNoise;
  private gate: number;

  constructor(
    readonly config: OscillatorConfig,
    private readonly rng: Rng,
    gate: number,
  ) {
    this.gate = gate;
    this.noise = this.makeNoise(gate);
  }

  private makeNoise(gate: number): FrequencyNoise {
    return new FrequencyNoise(
      rescaleNoise(this.config.noise, this.config.noiseTau, gate),
      this.rng,
    );
  }

  /** The mean y over the gate [start, start + gate]; a new gate length restarts the noise filters. */
  sample(start: number, gate: number): GateSample {
    if (gate !== this.gate) {
      this.gate = gate;
      this.noise = this.makeNoise(gate);
    }
    const c = this.config;
    const mid = start + gate / 2;
    const tempC = ambientC(c.ambient, mid);
    const y =
      c.offsetPpm * 1e-6 +
      (c.agingPpbPerDay * 1e-9 * mid) / 86400 +
      temperatureY(c.temperature, tempC) +
      scenarioY(c.scenario, mid) +
      this.noise.next();
    return { y, tempC };
  }
}
