/**
 * Pure planning helpers of the bench (no Vue, no network): which simulator plays a DUT, the link
 * profile a capture runs with, the gate limits of the shared schema, the target and planned time,
 * the bench's query (`/bench?study=…&checkpoint=…&dut=…`) and the next DUT of a checkpoint.
 * Unit-tested in tests/unit/client/benchPlanning.test.ts.
 */
import type { RouteLocationRaw } from 'vue-router';
import { CaptureCreate } from '../../shared/protocol/captures';
import { linkPreset, type LinkPreset, type LinkProfile } from '../../shared/protocol/linkProfile';
import { groupDigits } from './format';
import type { StaticOrientation } from '../../shared/analysis/tiltCheck';
import { SPI_AXIS_QUERY, spiAxisOf, type Axis } from '../../shared/protocol/accelerometer';
import type { CaptureDutRef } from '../api/captures';
import type { StudyDetail } from '../api/studies';

/** A study as the bench's form loads it: GET /api/studies/:id (getStudy in src/api/studies.ts). */
export type BenchStudy = StudyDetail;

/** What the setup form hands the bench when the operator starts (JSON-safe: kept for a resume). */
export interface BenchStart {
  create: CaptureCreate;
  profile: LinkProfile;
  linkKind: 'simulator' | 'serial';
  timeFactor: number;
  target: CaptureTarget;
  identity: { study: string; checkpoint: string; dut: string };
  dut: CaptureDutRef;
  checkpointOrder: number;
  guided: boolean;
}

/** The simulator presets the counter and the SPI bridge offer. */
export type SimulatorPreset = 'xtal-16m' | 'osc-25m' | 'tf-32k' | 'tcxo-12m8' | 'accel';

const PRESET_NOMINALS: Array<[SimulatorPreset, number]> = [
  ['xtal-16m', 16e6],
  ['osc-25m', 25e6],
  ['tf-32k', 32768],
  ['tcxo-12m8', 12.8e6],
];

/** The simulator preset that plays a DUT: by its kind, else by its nominal frequency. */
export function simulatorPresetFor(dut: { kind: string; nominal: number | null }): SimulatorPreset {
  const kind = dut.kind.toLowerCase();
  if (kind.includes('accel')) return 'accel';
  if (kind.includes('tuning')) return 'tf-32k';
  if (kind.includes('tcxo')) return 'tcxo-12m8';
  if (kind.includes('osc')) return 'osc-25m';
  const f = Number(dut.nominal);
  if (Number.isFinite(f) && f > 0) {
    let best = PRESET_NOMINALS[0];
    for (const p of PRESET_NOMINALS)
      if (Math.abs(Math.log(p[1] / f)) < Math.abs(Math.log(best[1] / f))) best = p;
    return best[0];
  }
  return 'xtal-16m';
}

/** True when a DUT is read as acceleration (mg) rather than frequency (Hz). */
export function isAccelerometer(dut: { kind: string }): boolean {
  return dut.kind.toLowerCase().includes('accel');
}

export interface ProfileChoice {
  linkKind: 'simulator' | 'serial';
  /** The instrument's own profile (takes precedence when given) … */
  instrumentProfile?: LinkProfile | null;
  /** … else this preset. */
  presetId: LinkPreset['id'];
  mode: 'talk' | 'query';
  gateTime: number;
  accelerometer: boolean;
  simulatorPreset: SimulatorPreset;
  checkpointIndex: number;
  acceleration: number;
  orientation?: StaticOrientation | null;
  /** The accelerometer axis a tilt check reads (default: the profile's own, Z for the preset). */
  axis?: Axis;
  /** Local gravity for the simulated accelerometer, m/s². */
  gravity?: number;
}

const SIM_ORIENTATION = { flat: 'flat', 'on-edge': 'edge', inverted: 'inverted' } as const;

/** The simulator's pose for a tilt-check pose of `axis`: Z keeps its old names; X and Y lie level with the board flat. */
export function simOrientation(axis: Axis, pose: StaticOrientation): string {
  if (axis === 'z') return SIM_ORIENTATION[pose];
  return pose === 'flat' ? `${axis}-up` : pose === 'inverted' ? `${axis}-down` : 'z-up';
}

/**
 * The link profile a capture runs with: the instrument's own profile or a preset; for the
 * simulator, the counter (talk-only or SCPI) or the SPI bridge with the DUT's preset, the
 * checkpoint's index, the gate and the time factor. Timeouts outlast one gate of wall time.
 */
export function buildProfile(c: ProfileChoice): LinkProfile {
  const factor = c.linkKind === 'simulator' && c.acceleration > 0 ? c.acceleration : 1;
  const gateWallMs = (c.gateTime * 1000) / factor;
  if (c.accelerometer) {
    const p =
      c.linkKind === 'serial' && c.instrumentProfile
        ? structuredClone(c.instrumentProfile)
        : linkPreset('spi-bridge');
    p.intervalMs = Math.max(1, Math.round(gateWallMs));
    // The tilt check reads the axis it checks (the preset's poll line reads Z).
    if (c.axis && (c.linkKind === 'simulator' || spiAxisOf(p) !== null))
      p.queryCommand = SPI_AXIS_QUERY[c.axis];
    if (c.linkKind === 'simulator') {
      p.kind = 'simulator';
      const params: Record<string, string> = {
        preset: 'accel',
        checkpoint: String(Math.min(3, Math.max(0, c.checkpointIndex))),
        accel: String(factor),
      };
      if (c.orientation) params.orientation = simOrientation(c.axis ?? 'z', c.orientation);
      if (c.gravity && c.gravity >= 9.7 && c.gravity <= 9.9) params.gravity = c.gravity.toFixed(6);
      p.simulator = { path: '/sim/spi-bridge', params };
      p.name = 'Simulated SPI bridge';
    }
    return p;
  }
  let p: LinkProfile;
  if (c.linkKind === 'serial' && c.instrumentProfile) p = structuredClone(c.instrumentProfile);
  else if (c.linkKind === 'simulator')
    p = linkPreset(c.mode === 'talk' ? 'talk-counter' : 'scpi-counter');
  else p = linkPreset(c.presetId);
  p.mode = c.mode;
  if (c.mode === 'query' && !p.queryCommand.trim()) p.queryCommand = 'READ?';
  if (c.linkKind === 'simulator') {
    p.kind = 'simulator';
    p.name = `Simulated counter (${c.mode === 'talk' ? 'talk-only' : 'query'})`;
    p.simulator = {
      path: '/sim/counter',
      params: {
        mode: c.mode,
        preset: c.simulatorPreset === 'accel' ? 'xtal-16m' : c.simulatorPreset,
        checkpoint: String(Math.min(3, Math.max(0, c.checkpointIndex))),
        gate: String(c.gateTime),
        accel: String(factor),
      },
    };
  } else if (c.mode === 'query' && p.parseRule !== 'hex-spi') {
    p.initCommands = [
      ...p.initCommands.filter((x) => !/GATE/i.test(x)),
      `:FREQ:GATE:TIME ${c.gateTime}`,
    ];
  }
  p.timeoutMs = Math.min(600_000, Math.max(p.timeoutMs, Math.round(gateWallMs * 3 + 1000)));
  return p;
}

// ---- Gate time, target and planned time ------------------------------------------------------

const gateSchema = CaptureCreate.shape.gateTime;
/** The gate time (or sample interval) the API takes, s: the shared schema's limits (0.001–1000 s). */
export const GATE_LIMITS = {
  min: gateSchema.minValue ?? 0.001,
  max: gateSchema.maxValue ?? 1000,
} as const;

/** Why a gate time is refused, in the form's words, or null when the API would take it. */
export function gateTimeProblem(v: number | null | undefined): string | null {
  if (v === null || v === undefined || !Number.isFinite(v)) return 'Enter a gate time';
  return gateSchema.safeParse(v).success
    ? null
    : `Gate time must be between ${GATE_LIMITS.min} s and ${GATE_LIMITS.max} s`;
}

/** What the bench plans: run for a duration (capture seconds), take n readings, or until stopped. */
export type CaptureTarget =
  { kind: 'duration'; seconds: number } | { kind: 'count'; n: number } | { kind: 'none' };

export interface TargetChoice {
  target: 'duration' | 'count' | 'none';
  targetSeconds: number;
  targetCount: number;
}

export function targetOf(c: TargetChoice): CaptureTarget {
  if (c.target === 'duration') return { kind: 'duration', seconds: c.targetSeconds };
  if (c.target === 'count') return { kind: 'count', n: c.targetCount };
  return { kind: 'none' };
}

/** Minutes the capture is planned to run (its operator is mailed when it stays open longer), or undefined. */
export function plannedMinutesFor(target: CaptureTarget, gateTime: number): number | undefined {
  if (target.kind === 'duration') return Math.max(1, Math.ceil(target.seconds / 60));
  if (target.kind === 'count') return Math.max(1, Math.ceil((target.n * (gateTime || 1)) / 60));
  return undefined;
}

/** "about 600 readings, 60 s on the wall clock" for the setup form (time factor = simulator speed). */
export function estimateText(c: TargetChoice & { gateTime: number }, timeFactor: number): string {
  const perSecond = c.gateTime > 0 ? 1 / c.gateTime : 0;
  const factor = timeFactor > 0 ? timeFactor : 1;
  if (c.target === 'duration') {
    return `about ${groupDigits(Math.round(c.targetSeconds * perSecond))} readings, ${groupDigits(Math.round(c.targetSeconds / factor))} s on the wall clock`;
  }
  if (c.target === 'count')
    return `about ${groupDigits(Math.round(perSecond > 0 ? c.targetCount / perSecond / factor : 0))} s on the wall clock`;
  return 'until you stop it';
}

// ---- From plan to bench ----------------------------------------------------------------------

/** What a link to the bench chooses: a study, and optionally its checkpoint and DUT. */
export interface BenchPick {
  studyId: number | null;
  checkpointId: number | null;
  dutId: number | null;
}

function positiveId(v: unknown): number | null {
  const raw = Array.isArray(v) ? v[0] : v;
  if (typeof raw !== 'string' && typeof raw !== 'number') return null;
  const s = String(raw).trim();
  if (!/^\d{1,10}$/.test(s)) return null;
  const n = Number(s);
  return n > 0 && n <= 2_147_483_647 ? n : null;
}

/** The choices `/bench?study=…&checkpoint=…&dut=…` carries (anything malformed is ignored). */
export function benchPickFromQuery(query: Record<string, unknown>): BenchPick {
  return {
    studyId: positiveId(query.study),
    checkpointId: positiveId(query.checkpoint),
    dutId: positiveId(query.dut),
  };
}

/** True when the query names at least a study. */
export function hasBenchPick(p: BenchPick): boolean {
  return p.studyId !== null;
}

/** The route that opens the bench with these choices made. */
export function benchRoute(p: {
  studyId: number;
  checkpointId?: number | null;
  dutId?: number | null;
}): RouteLocationRaw {
  const query: Record<string, string> = { study: String(p.studyId) };
  if (p.checkpointId) query.checkpoint = String(p.checkpointId);
  if (p.dutId) query.dut = String(p.dutId);
  return { name: 'bench', query };
}

/**
 * Applies a picked study, checkpoint and DUT to the study the form loaded: each pick is kept when
 * it belongs to the study, else the first checkpoint / DUT stands in (and `misses` says which pick
 * was not found, so the form can say so instead of silently choosing another).
 */
export function resolvePick(
  study: { id: number; checkpoints: Array<{ id: number }>; duts: Array<{ id: number }> },
  pick: { checkpointId: number | null; dutId: number | null },
): { checkpointId: number | null; dutId: number | null; misses: Array<'checkpoint' | 'dut'> } {
  const misses: Array<'checkpoint' | 'dut'> = [];
  const cpOk =
    pick.checkpointId !== null && study.checkpoints.some((c) => c.id === pick.checkpointId);
  const dutOk = pick.dutId !== null && study.duts.some((d) => d.id === pick.dutId);
  if (pick.checkpointId !== null && !cpOk) misses.push('checkpoint');
  if (pick.dutId !== null && !dutOk) misses.push('dut');
  return {
    checkpointId: cpOk ? pick.checkpointId : (study.checkpoints[0]?.id ?? null),
    dutId: dutOk ? pick.dutId : (study.duts[0]?.id ?? null),
    misses,
  };
}

/**
 * The DUT to capture after `currentId` at the same checkpoint: the next in the study's order that
 * has no capture there yet, else simply the next one; null after the last DUT.
 */
export function nextDut<D extends { id: number }>(
  duts: readonly D[],
  currentId: number,
  captured: ReadonlySet<number> = new Set(),
): D | null {
  const i = duts.findIndex((d) => d.id === currentId);
  if (i < 0) return null;
  const after = duts.slice(i + 1);
  return after.find((d) => !captured.has(d.id)) ?? after[0] ?? null;
}
