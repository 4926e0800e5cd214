import { describe, expect, it } from 'vitest';
import {
  benchPickFromQuery,
  benchRoute,
  estimateText,
  GATE_LIMITS,
  gateTimeProblem,
  nextDut,
  plannedMinutesFor,
  resolvePick,
  targetOf,
} from '../../../src/utils/benchPlanning';

// The bench's pure planning helpers (issue 13: plan to bench in one click; issue 9 item 4: the
// bench form validates with the shared schema's limits).
describe('gate time limits', () => {
  it('are the shared schema’s, 0.001 s to 1000 s, not the old 0.01–100 s', () => {
    // shared/protocol/captures.ts CaptureCreate.gateTime (common practice, no source)
    expect(GATE_LIMITS).toEqual({ min: 0.001, max: 1000 });
  });

  it.each([
    [0.001, null],
    [0.005, null],
    [250, null],
    [1000, null],
    [0.0005, 'Gate time must be between 0.001 s and 1000 s'],
    [1000.5, 'Gate time must be between 0.001 s and 1000 s'],
    [Number.NaN, 'Enter a gate time'],
    [null, 'Enter a gate time'],
  ])('gate %s → %s', (v, problem) => {
    expect(gateTimeProblem(v as number | null)).toBe(problem);
  });
});

describe('target and planned time', () => {
  it('turns the form’s choice into the capture’s target', () => {
    expect(targetOf({ target: 'duration', targetSeconds: 600, targetCount: 5 })).toEqual({
      kind: 'duration',
      seconds: 600,
    });
    expect(targetOf({ target: 'count', targetSeconds: 600, targetCount: 5 })).toEqual({
      kind: 'count',
      n: 5,
    });
    expect(targetOf({ target: 'none', targetSeconds: 600, targetCount: 5 })).toEqual({
      kind: 'none',
    });
  });

  it.each([
    // arithmetic: 600 s = 10 min; 61 s rounds up to 2 min; 1000 readings × 0.5 s = 500 s → 9 min
    [{ kind: 'duration', seconds: 600 } as const, 1, 10],
    [{ kind: 'duration', seconds: 61 } as const, 1, 2],
    [{ kind: 'duration', seconds: 5 } as const, 1, 1],
    [{ kind: 'count', n: 1000 } as const, 0.5, 9],
    [{ kind: 'none' } as const, 1, undefined],
  ])('%j at gate %s s plans %s min', (target, gate, minutes) => {
    expect(plannedMinutesFor(target, gate)).toBe(minutes);
  });

  it('estimates readings and wall time with the simulator’s speed', () => {
    // arithmetic: 600 s at 1 s gate = 600 readings; 600 s / 10× = 60 s wall
    expect(
      estimateText({ target: 'duration', targetSeconds: 600, targetCount: 0, gateTime: 1 }, 10),
    ).toBe('about 600 readings, 60 s on the wall clock');
    // arithmetic: 1000 readings at 0.1 s gate = 100 s, real time
    expect(
      estimateText({ target: 'count', targetSeconds: 0, targetCount: 1000, gateTime: 0.1 }, 1),
    ).toBe('about 100 s on the wall clock');
    expect(estimateText({ target: 'none', targetSeconds: 0, targetCount: 0, gateTime: 1 }, 1)).toBe(
      'until you stop it',
    );
  });
});

describe('from plan to bench', () => {
  it('reads study, checkpoint and DUT from the bench’s query and ignores anything malformed', () => {
    expect(benchPickFromQuery({ study: '4', checkpoint: '12', dut: '31' })).toEqual({
      studyId: 4,
      checkpointId: 12,
      dutId: 31,
    });
    expect(benchPickFromQuery({ study: ['4', '5'], dut: '-3', checkpoint: '1e3' })).toEqual({
      studyId: 4,
      checkpointId: null,
      dutId: null,
    });
    expect(benchPickFromQuery({ study: '0' })).toEqual({
      studyId: null,
      checkpointId: null,
      dutId: null,
    });
    expect(benchPickFromQuery({ study: '99999999999' }).studyId).toBeNull();
    expect(benchPickFromQuery({})).toEqual({ studyId: null, checkpointId: null, dutId: null });
  });

  it('builds the bench’s route with only the choices given', () => {
    expect(benchRoute({ studyId: 4 })).toEqual({ name: 'bench', query: { study: '4' } });
    expect(benchRoute({ studyId: 4, checkpointId: 12, dutId: 31 })).toEqual({
      name: 'bench',
      query: { study: '4', checkpoint: '12', dut: '31' },
    });
  });

  const study = {
    id: 4,
    checkpoints: [{ id: 11 }, { id: 12 }],
    duts: [{ id: 30 }, { id: 31 }, { id: 32 }],
  };

  it('keeps picks that belong to the study', () => {
    expect(resolvePick(study, { checkpointId: 12, dutId: 31 })).toEqual({
      checkpointId: 12,
      dutId: 31,
      misses: [],
    });
  });

  it('falls back to the first checkpoint and DUT and names what the link got wrong', () => {
    expect(resolvePick(study, { checkpointId: 99, dutId: 31 })).toEqual({
      checkpointId: 11,
      dutId: 31,
      misses: ['checkpoint'],
    });
    expect(resolvePick(study, { checkpointId: null, dutId: 77 })).toEqual({
      checkpointId: 11,
      dutId: 30,
      misses: ['dut'],
    });
    expect(
      resolvePick({ id: 5, checkpoints: [], duts: [] }, { checkpointId: null, dutId: null }),
    ).toEqual({ checkpointId: null, dutId: null, misses: [] });
  });

  it('offers the next DUT that still lacks a capture at the checkpoint, else the next one, none after the last', () => {
    const duts = [{ id: 30 }, { id: 31 }, { id: 32 }, { id: 33 }];
    expect(nextDut(duts, 30)?.id).toBe(31);
    expect(nextDut(duts, 30, new Set([31]))?.id).toBe(32);
    expect(nextDut(duts, 31, new Set([32, 33]))?.id).toBe(32);
    expect(nextDut(duts, 33)).toBeNull();
    expect(nextDut(duts, 99)).toBeNull();
  });
});
