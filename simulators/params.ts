/**
 * Query parameters of simulator sessions (`/sim/counter?…`, `/sim/spi-bridge?…`), validated
 * with zod and turned into device configurations on top of a preset. Unknown parameters are
 * refused, so a typo never silently runs the wrong scenario.
 */
import { z } from 'zod';
import type { CounterConfig } from './counter';
import { GATE_MAX, GATE_MIN } from './counter';
import { ORIENTATIONS, type AccelConfig } from './accelerometer';
import { COUNTER_PRESET_NAMES, presetAccel, presetCounter, type CheckpointIndex } from './presets';

const NUM_RE = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;

function num(min: number, max: number) {
  return z
    .string()
    .regex(NUM_RE, 'must be a number')
    .transform(Number)
    .pipe(z.number().min(min).max(max));
}
function int(min: number, max: number) {
  return z
    .string()
    .regex(/^\d+$/, 'must be a whole number')
    .transform(Number)
    .pipe(z.number().int().min(min).max(max));
}
const level = num(0, 1e-3); // fractional σ at τ0; 1e-3 is already a broken oscillator

export const CounterParams = z.strictObject({
  mode: z.enum(['talk', 'query']).optional(),
  preset: z.enum(COUNTER_PRESET_NAMES).optional(),
  checkpoint: int(0, 3).optional(),
  nominal: num(1e-3, 1e11).optional(),
  offsetPpm: num(-1e4, 1e4).optional(),
  gate: num(GATE_MIN, GATE_MAX).optional(),
  dead: num(0, 100).optional(),
  wpm: level.optional(),
  fpm: level.optional(),
  wfm: level.optional(),
  ffm: level.optional(),
  rwfm: level.optional(),
  agingPpbPerDay: num(-1e5, 1e5).optional(),
  tempcoPpm: num(-100, 100).optional(),
  refOffset: num(-1e-3, 1e-3).optional(),
  accel: num(0.01, 1e6).optional(),
  garble: num(0, 1).optional(),
  seed: int(0, 0xffffffff).optional(),
  scenario: z.enum(['none', 'step', 'ramp']).optional(),
  stepPpm: num(-1e4, 1e4).optional(),
  rampPpmPerHour: num(-1e4, 1e4).optional(),
  stepAfter: num(0, 1e9).optional(),
});
export type CounterParams = z.infer<typeof CounterParams>;

const orientationNames = Object.keys(ORIENTATIONS) as [
  keyof typeof ORIENTATIONS,
  ...(keyof typeof ORIENTATIONS)[],
];

export const SpiParams = z.strictObject({
  preset: z.literal('accel').optional(),
  checkpoint: int(0, 3).optional(),
  orientation: z.enum(orientationNames).optional(),
  pitch: num(-360, 360).optional(),
  roll: num(-360, 360).optional(),
  noise: num(0, 1000).optional(),
  biasX: num(-2000, 2000).optional(),
  biasY: num(-2000, 2000).optional(),
  biasZ: num(-2000, 2000).optional(),
  sensErr: num(-50, 50).optional(),
  gravity: num(9.7, 9.9).optional(),
  biasStepMg: num(-2000, 2000).optional(),
  stepAfter: num(0, 1e9).optional(),
  accel: num(0.01, 1e6).optional(),
  seed: int(0, 0xffffffff).optional(),
});
export type SpiParams = z.infer<typeof SpiParams>;

export type ParamResult<T> = { ok: true; config: T } | { ok: false; message: string };

function failure(error: z.ZodError): { ok: false; message: string } {
  const first = error.issues[0];
  const where = first.path.length ? first.path.join('.') : 'parameters';
  const msg =
    first.code === 'unrecognized_keys'
      ? `unknown parameter ${first.keys.join(', ')}`
      : `${where}: ${first.message}`;
  return { ok: false, message: msg };
}

/** A counter configuration from a session URL's query (preset first, then each override). */
export function counterConfigFromQuery(query: URLSearchParams): ParamResult<CounterConfig> {
  const parsed = CounterParams.safeParse(Object.fromEntries(query));
  if (!parsed.success) return failure(parsed.error);
  const p = parsed.data;
  const c = presetCounter(p.preset ?? 'xtal-16m', (p.checkpoint ?? 0) as CheckpointIndex);
  const o = c.oscillator;
  // Without a preset, noise overrides replace the preset's noise instead of adding to it.
  const noiseGiven = [p.wpm, p.fpm, p.wfm, p.ffm, p.rwfm].some((v) => v !== undefined);
  if (noiseGiven) {
    o.noise = {
      wpm: p.wpm ?? 0,
      fpm: p.fpm ?? 0,
      wfm: p.wfm ?? 0,
      ffm: p.ffm ?? 0,
      rwfm: p.rwfm ?? 0,
    };
    o.noiseTau = p.gate ?? 1; // levels given in the URL are σ at τ0 = the gate
  }
  if (p.nominal !== undefined) o.nominal = p.nominal;
  if (p.offsetPpm !== undefined) o.offsetPpm = p.offsetPpm;
  if (p.agingPpbPerDay !== undefined) o.agingPpbPerDay = p.agingPpbPerDay;
  if (p.tempcoPpm !== undefined)
    o.temperature = { kind: 'linear', ppmPerC: p.tempcoPpm, refC: o.ambient.meanC };
  const scenario =
    p.scenario ??
    (p.stepPpm !== undefined ? 'step' : p.rampPpmPerHour !== undefined ? 'ramp' : 'none');
  const afterS = p.stepAfter ?? 0;
  if (scenario === 'step') o.scenario = { kind: 'step', ppm: p.stepPpm ?? 0, afterS };
  if (scenario === 'ramp') o.scenario = { kind: 'ramp', ppmPerHour: p.rampPpmPerHour ?? 0, afterS };
  if (p.gate !== undefined) c.gate = p.gate;
  if (p.dead !== undefined) c.deadTime = p.dead;
  if (p.refOffset !== undefined) c.refOffset = p.refOffset;
  if (p.accel !== undefined) c.accel = p.accel;
  if (p.garble !== undefined) c.garble = p.garble;
  if (p.seed !== undefined) c.seed = p.seed;
  c.mode = p.mode ?? 'query';
  return { ok: true, config: c };
}

/** An accelerometer configuration from a session URL's query. */
export function accelConfigFromQuery(query: URLSearchParams): ParamResult<AccelConfig> {
  const parsed = SpiParams.safeParse(Object.fromEntries(query));
  if (!parsed.success) return failure(parsed.error);
  const p = parsed.data;
  const c = presetAccel((p.checkpoint ?? 0) as CheckpointIndex);
  if (p.orientation) c.orientation = { ...ORIENTATIONS[p.orientation] };
  if (p.pitch !== undefined) c.orientation.pitchDeg = p.pitch;
  if (p.roll !== undefined) c.orientation.rollDeg = p.roll;
  if (p.noise !== undefined) c.noiseMg = p.noise;
  if (p.biasX !== undefined) c.biasMg.x = p.biasX;
  if (p.biasY !== undefined) c.biasMg.y = p.biasY;
  if (p.biasZ !== undefined) c.biasMg.z = p.biasZ;
  if (p.sensErr !== undefined) c.sensErrPct = { x: p.sensErr, y: p.sensErr, z: p.sensErr };
  if (p.gravity !== undefined) c.localGravity = p.gravity;
  if (p.biasStepMg !== undefined) {
    const s = p.biasStepMg;
    c.biasStep = { mg: { x: s, y: s, z: s }, afterS: p.stepAfter ?? 0 };
  }
  if (p.accel !== undefined) c.accel = p.accel;
  if (p.seed !== undefined) c.seed = p.seed;
  return { ok: true, config: c };
}
