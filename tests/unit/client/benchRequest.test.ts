import { describe, expect, it } from 'vitest';
import {
  BENCH_BOUNDS,
  BENCH_SETUP_WORDING,
  BenchSetupCheck,
  ambientProblem,
  benchSetupBody,
  benchStartOf,
  plannedLength,
  targetCountProblem,
  targetSecondsProblem,
  type BenchStartInput,
} from '../../../src/utils/benchRequest';
import { fieldErrors } from '../../../src/api/studyPlan';
import { DEFAULT_CHOICES, type BenchChoices } from '../../../src/stores/bench';
import { CaptureCreate } from '../../../shared/protocol/captures';
import { linkPreset } from '../../../shared/protocol/linkProfile';
import type { BenchStudy } from '../../../src/utils/benchPlanning';

// The bench setup form's checks and the request it starts a capture with (issue 9 item 4: the
// form validates through the shared schema; its request is built by a plain function).

describe('the form’s limits come from the schemas', () => {
  it('gate and ambient from CaptureCreate, the target from the bench’s narrowing of CaptureTarget', () => {
    // shared/protocol/captures.ts CaptureCreate.gateTime (0.001…1000 s) and .ambientC (−60…150 °C); the bench plans 1 s to a
    // week (604 800 s = 7 × 86 400 s) or 2 to ten million readings (common practice, no source)
    expect(BENCH_BOUNDS).toEqual({
      gateTime: { min: 0.001, max: 1000 },
      ambientC: { min: -60, max: 150 },
      targetSeconds: { min: 1, max: 604_800 },
      targetCount: { min: 2, max: 10_000_000 },
    });
  });

  it.each([
    [23.4, null],
    [-60, null],
    [150, null],
    [null, 'Read the bench thermometer and enter the ambient temperature'],
    [Number.NaN, 'Read the bench thermometer and enter the ambient temperature'],
    [-60.5, 'Ambient must be between −60 °C and 150 °C'],
    [151, 'Ambient must be between −60 °C and 150 °C'],
  ])('ambient %s → %s', (v, problem) => {
    expect(ambientProblem(v)).toBe(problem);
  });

  it.each([
    [600, null],
    [1, null],
    [604_800, null],
    [0.5, 'Run for at least 1 s'],
    [null, 'Run for at least 1 s'],
    [604_801, 'Run for at most 604\u2009800 s'],
  ])('capture time %s s → %s', (v, problem) => {
    expect(targetSecondsProblem(v)).toBe(problem);
  });

  it.each([
    [1000, null],
    [2, null],
    [1, 'Take at least 2 readings'],
    [null, 'Take at least 2 readings'],
    [2.5, 'Take a whole number of readings'],
    [10_000_001, 'Take at most 10\u2009000\u2009000 readings'],
  ])('%s readings → %s', (v, problem) => {
    expect(targetCountProblem(v)).toBe(problem);
  });

  it('keeps the planner’s length inside what the bench plans', () => {
    expect(plannedLength(0.2)).toBe(1);
    expect(plannedLength(1800)).toBe(1800);
    expect(plannedLength(1e7)).toBe(604_800);
  });
});

const choices = (over: Partial<BenchChoices> = {}): BenchChoices => ({
  ...DEFAULT_CHOICES,
  studyId: 1,
  checkpointId: 10,
  dutId: 3,
  ambientC: 23.4,
  ...over,
});

describe('BenchSetupCheck', () => {
  const errorsOf = (c: BenchChoices, guided = false) =>
    fieldErrors(BenchSetupCheck, benchSetupBody(c, guided), BENCH_SETUP_WORDING).errors;

  it('takes a complete form', () => {
    expect(errorsOf(choices())).toEqual({});
  });

  it('names each empty choice in the form’s words', () => {
    expect(
      errorsOf(choices({ studyId: null, checkpointId: null, dutId: null, ambientC: null })),
    ).toEqual({
      studyId: 'Choose a study',
      checkpointId: 'Choose a checkpoint',
      dutId: 'Choose the DUT',
      ambientC: 'Read the bench thermometer and enter the ambient temperature',
    });
  });

  it('puts a gate outside the API’s 0.001–1000 s on the gate field', () => {
    // shared/protocol/captures.ts CaptureCreate.gateTime (common practice, no source)
    expect(errorsOf(choices({ gateTime: 2000 }))).toEqual({
      gateTime: 'Gate time must be between 0.001 s and 1000 s',
    });
  });

  it('checks only the target the operator chose, and none for a guided tilt check', () => {
    const bad = { targetSeconds: 0, targetCount: 1 };
    expect(errorsOf(choices({ ...bad, target: 'duration' }))).toEqual({
      'target.seconds': 'Run for at least 1 s',
    });
    expect(errorsOf(choices({ ...bad, target: 'count' }))).toEqual({
      'target.n': 'Take at least 2 readings',
    });
    expect(errorsOf(choices({ ...bad, target: 'none' }))).toEqual({});
    expect(errorsOf(choices({ ...bad, target: 'duration' }), true)).toEqual({});
  });
});

const crystal = {
  id: 3,
  studyId: 1,
  label: 'Y1 16 MHz crystal',
  kind: 'crystal',
  nominal: 16e6,
  unit: 'Hz',
  limit: 1,
  limitLow: -1,
  limitHigh: 1,
  limitUnit: 'ppm',
  position: 'Y1',
  serial: null,
};
const accelerometer = {
  ...crystal,
  id: 5,
  label: 'U5 3-axis accelerometer',
  kind: 'accelerometer',
  nominal: 1000,
  unit: 'mg',
};
const study = {
  id: 1,
  title: 'Aqueous wash',
  allowSimulated: true,
  checkpoints: [
    { id: 10, studyId: 1, name: 'Baseline', order: 0, exposure: null },
    { id: 11, studyId: 1, name: 'After wash', order: 1, exposure: null },
  ],
  duts: [crystal, accelerometer],
} as unknown as BenchStudy;

function input(over: Partial<BenchStartInput> = {}): BenchStartInput {
  return {
    choices: choices({ instrumentId: 2, referenceId: 4, notes: '  fixture B  ' }),
    study,
    checkpoint: study.checkpoints[1],
    dut: study.duts[0],
    instrumentProfile: null,
    guided: false,
    localGravity: 9.80665,
    ...over,
  };
}

describe('benchStartOf', () => {
  it('asks for a frequency capture of a crystal from the simulated counter', () => {
    const start = benchStartOf(input());
    expect(start.create).toMatchObject({
      dutId: 3,
      checkpointId: 11,
      quantity: 'frequency',
      unit: 'Hz',
      nominal: 16e6,
      gateTime: 1,
      instrumentId: 2,
      referenceId: 4,
      ambientC: 23.4,
      notes: 'fixture B',
      // DEFAULT_CHOICES: 600 s → 10 min planned (arithmetic)
      target: { kind: 'duration', seconds: 600 },
      plannedMinutes: 10,
    });
    expect(start.create.orientation).toBeUndefined();
    expect(CaptureCreate.safeParse(start.create).success).toBe(true);
    expect(start.profile.kind).toBe('simulator');
    expect(start.profile.simulator?.params.preset).toBe('xtal-16m');
    expect(start.profile.simulator?.params.checkpoint).toBe('1');
    expect(start.timeFactor).toBe(10);
    expect(start.identity).toEqual({
      study: 'Aqueous wash',
      checkpoint: 'After wash',
      dut: 'Y1 16 MHz crystal',
    });
    expect(start.checkpointOrder).toBe(1);
    expect(start.guided).toBe(false);
  });

  it('runs a serial link in real time with the instrument’s own profile', () => {
    const own = { ...linkPreset('scpi-counter'), name: 'Counter C-1 own' };
    const start = benchStartOf(
      input({
        choices: choices({ linkKind: 'serial', mode: 'query', target: 'none' }),
        instrumentProfile: own,
      }),
    );
    expect(start.timeFactor).toBe(1);
    expect(start.profile.name).toBe('Counter C-1 own');
    expect(start.target).toEqual({ kind: 'none' });
    expect(start.create.target).toBeUndefined();
    expect(start.create.plannedMinutes).toBeUndefined();
  });

  it('asks an accelerometer for acceleration in mg, with its pose and no reference', () => {
    const flat = benchStartOf(
      input({
        dut: study.duts[1],
        choices: choices({ orientation: 'flat', referenceId: 4, gateTime: 0.1 }),
        guided: true,
      }),
    );
    expect(flat.create).toMatchObject({
      quantity: 'acceleration',
      unit: 'mg',
      nominal: 1000,
      orientation: 'flat',
    });
    expect(flat.create.referenceId).toBeUndefined();
    expect(flat.profile.simulator?.path).toBe('/sim/spi-bridge');
    expect(flat.guided).toBe(true);
    // Lying on its edge, the axis reads about 0 g: no nominal of 1 g (common practice, no source)
    const edge = benchStartOf(
      input({ dut: study.duts[1], choices: choices({ orientation: 'on-edge' }) }),
    );
    expect(edge.create.nominal).toBeUndefined();
    expect(edge.create.orientation).toBe('on-edge');
  });

  it('never marks a frequency capture as a guided tilt check', () => {
    expect(benchStartOf(input({ guided: true })).guided).toBe(false);
  });
});
