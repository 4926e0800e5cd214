/**
 * The bench setup form's checks and the request it hands the bench, as plain functions: every
 * field is checked by a piece of the shared capture schema (shared/protocol/captures.ts) — the
 * bench only narrows what it plans (a target of 1 s to a week, or 2 to ten million readings) —
 * and said in the form's words. Unit-tested in tests/unit/client/benchRequest.test.ts.
 */
import { z } from 'zod';
import { CaptureCreate, CaptureTarget } from '../../shared/protocol/captures';
import type { LinkPreset, LinkProfile } from '../../shared/protocol/linkProfile';
import { boundsOf, inputBounds } from '../composables/useZodForm';
import type { BenchChoices } from '../stores/bench';
import {
  buildProfile,
  gateTimeProblem,
  isAccelerometer,
  plannedMinutesFor,
  simulatorPresetFor,
  targetOf,
  type BenchStart,
  type BenchStudy,
} from './benchPlanning';
import { presetsFor } from './benchOffer';
import { groupDigits } from './format';

const [durationTarget, countTarget] = CaptureTarget.options;

/**
 * What the bench lets an operator plan, inside what the API takes: a run of at least 1 s and at
 * most a week (longer runs are left running with "I stop it"), or at least 2 readings (one has
 * no scatter) and at most ten million.
 */
export const BENCH_TARGET_SECONDS = durationTarget.shape.seconds.min(1).max(604_800);
export const BENCH_TARGET_COUNT = countTarget.shape.n.min(2).max(10_000_000);

/** Input limits of the form's numeric fields (`v-bind` on the input), read from the schemas that check them. */
export const BENCH_BOUNDS = {
  gateTime: inputBounds(CaptureCreate, ['gateTime']),
  ambientC: inputBounds(CaptureCreate, ['ambientC']),
  targetSeconds: inputBounds(BENCH_TARGET_SECONDS, []),
  targetCount: inputBounds(BENCH_TARGET_COUNT, []),
} as const;

/** How a number fails its schema: empty, below its minimum, above its maximum, or otherwise (e.g. not whole). */
export type NumberProblem = 'missing' | 'low' | 'high' | 'other';

export function numberProblem(field: z.ZodType, v: unknown): NumberProblem | null {
  if (typeof v !== 'number' || !Number.isFinite(v)) return 'missing';
  if (field.safeParse(v).success) return null;
  const { min, max } = boundsOf(field, []);
  if (min !== null && v < min) return 'low';
  if (max !== null && v > max) return 'high';
  return 'other';
}

const minus = (v: number) => String(v).replace('-', '−');

/** Why an ambient is refused, in the form's words (it is required at the bench), or null. */
export function ambientProblem(v: number | null | undefined): string | null {
  const problem = numberProblem(CaptureCreate.shape.ambientC, v);
  if (problem === 'missing') return 'Read the bench thermometer and enter the ambient temperature';
  const { min, max } = BENCH_BOUNDS.ambientC;
  return problem ? `Ambient must be between ${minus(min)} °C and ${minus(max)} °C` : null;
}

/** Why a planned capture time (seconds) is refused, or null. */
export function targetSecondsProblem(v: number | null | undefined): string | null {
  const problem = numberProblem(BENCH_TARGET_SECONDS, v);
  if (problem === 'high') return `Run for at most ${groupDigits(BENCH_BOUNDS.targetSeconds.max)} s`;
  return problem ? `Run for at least ${BENCH_BOUNDS.targetSeconds.min} s` : null;
}

/** Why a planned number of readings is refused, or null. */
export function targetCountProblem(v: number | null | undefined): string | null {
  const problem = numberProblem(BENCH_TARGET_COUNT, v);
  if (problem === 'high')
    return `Take at most ${groupDigits(BENCH_BOUNDS.targetCount.max)} readings`;
  if (problem === 'other') return 'Take a whole number of readings';
  return problem ? `Take at least ${BENCH_BOUNDS.targetCount.min} readings` : null;
}

/** A field checked by one of the functions above: its sentence becomes the field's issue. */
function said(problem: (v: number | null | undefined) => string | null) {
  return z.custom<number>().superRefine((v, ctx) => {
    const message = problem(v as number | null | undefined);
    if (message) ctx.addIssue({ code: 'custom', message });
  });
}

/** The setup form's checks (useZodForm): what the API will check, plus the bench's own plan. */
export const BenchSetupCheck = z.object({
  studyId: z.number().int().positive(),
  checkpointId: CaptureCreate.shape.checkpointId,
  dutId: CaptureCreate.shape.dutId,
  gateTime: said(gateTimeProblem),
  ambientC: said(ambientProblem),
  target: z.discriminatedUnion('kind', [
    z.object({ kind: z.literal('duration'), seconds: said(targetSecondsProblem) }),
    z.object({ kind: z.literal('count'), n: said(targetCountProblem) }),
    z.object({ kind: z.literal('none') }),
  ]),
});

/** Form item `prop` → the path of BenchSetupCheck whose issue it shows. */
export const BENCH_SETUP_FIELDS = {
  studyId: 'studyId',
  checkpointId: 'checkpointId',
  dutId: 'dutId',
  gateTime: 'gateTime',
  ambientC: 'ambientC',
  targetSeconds: 'target.seconds',
  targetCount: 'target.n',
} as const;

/** The fields an operator must fill (marked as required beside their labels). */
export const BENCH_SETUP_REQUIRED: readonly string[] = [
  'studyId',
  'checkpointId',
  'dutId',
  'ambientC',
];

/** The wording of an empty choice. */
export const BENCH_SETUP_WORDING = {
  studyId: 'Choose a study',
  checkpointId: 'Choose a checkpoint',
  dutId: 'Choose the DUT',
} as const;

/** What BenchSetupCheck reads from the form; a guided tilt check plans no target of its own. */
export function benchSetupBody(c: BenchChoices, guided: boolean) {
  return {
    studyId: c.studyId,
    checkpointId: c.checkpointId,
    dutId: c.dutId,
    gateTime: c.gateTime,
    ambientC: c.ambientC,
    target: guided ? { kind: 'none' } : targetOf(c),
  };
}

/** The planner's "use this length": seconds kept inside what the bench plans. */
export function plannedLength(seconds: number): number {
  const { min, max } = BENCH_BOUNDS.targetSeconds;
  return Math.min(max, Math.max(min, seconds));
}

/** What the start needs besides the remembered choices. */
export interface BenchStartInput {
  choices: BenchChoices;
  study: BenchStudy;
  checkpoint: BenchStudy['checkpoints'][number];
  dut: BenchStudy['duts'][number];
  instrumentProfile: LinkProfile | null;
  guided: boolean;
  /** Local gravity at the lab, m/s² (the simulated accelerometer uses it). */
  localGravity: number;
}

/**
 * The request the bench starts a capture with: the capture to create (quantity, nominal and
 * conditions), the link profile, the time factor of a simulator, the target and planned time.
 */
export function benchStartOf(i: BenchStartInput): BenchStart {
  const { choices: c, dut: d, checkpoint } = i;
  const accel = isAccelerometer(d);
  const profile = buildProfile({
    linkKind: c.linkKind,
    instrumentProfile: i.instrumentProfile,
    presetId: (presetsFor(accel)[0]?.id ?? 'talk-counter') as LinkPreset['id'],
    mode: accel ? 'query' : c.mode,
    gateTime: c.gateTime,
    accelerometer: accel,
    simulatorPreset: simulatorPresetFor(d),
    checkpointIndex: checkpoint.order,
    acceleration: c.acceleration,
    orientation: c.orientation,
    gravity: i.localGravity,
  });
  // An accelerometer's nominal (1 g in mg) holds only lying flat; a frequency DUT's always.
  const nominal = d.nominal > 0 && (!accel || c.orientation === 'flat') ? d.nominal : undefined;
  const create: CaptureCreate = {
    dutId: d.id,
    checkpointId: checkpoint.id,
    quantity: accel ? 'acceleration' : 'frequency',
    unit: accel ? 'mg' : 'Hz',
    nominal,
    gateTime: c.gateTime,
    instrumentId: c.instrumentId ?? undefined,
    referenceId: !accel && c.referenceId ? c.referenceId : undefined,
    ambientC: c.ambientC ?? undefined,
    orientation: accel && c.orientation ? c.orientation : undefined,
    notes: c.notes.trim() || undefined,
    linkProfile: profile,
  };
  const target = targetOf(c);
  // Watchers elsewhere see the progress and time left against what the bench plans.
  if (target.kind !== 'none') create.target = target;
  // The planned time: its operator is e-mailed if the capture is left open longer than this.
  const planned = plannedMinutesFor(target, c.gateTime);
  if (planned !== undefined) create.plannedMinutes = planned;
  return {
    create,
    profile,
    linkKind: c.linkKind,
    timeFactor: c.linkKind === 'simulator' ? c.acceleration : 1,
    target,
    identity: { study: i.study.title, checkpoint: checkpoint.name, dut: d.label },
    dut: d,
    checkpointOrder: checkpoint.order,
    guided: accel && i.guided,
  };
}
