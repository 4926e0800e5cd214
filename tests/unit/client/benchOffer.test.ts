import { describe, expect, it } from 'vitest';
import {
  accelerometerDefaults,
  ambientReading,
  benchStudyOf,
  capturableStudies,
  defaultReferenceId,
  defaultStudy,
  equipmentWarning,
  keptOrFirst,
  offeredInstruments,
  offeredReferences,
  pickMissNotice,
  presetsFor,
  profileNote,
  simulatedRefused,
  suitableInstruments,
  thermometerOf,
} from '../../../src/utils/benchOffer';
import { linkPreset } from '../../../shared/protocol/linkProfile';
import type { StudyDetail } from '../../../src/api/studies';

// What the bench setup form offers and preselects (issue 9 item 4: the form's defaults as plain
// functions). The rules are Driftbench's own (common practice, no source); the expected words are
// the form's as they were before the split.

const status = (state: string, daysLeft: number | null, awaySince: string | null = null) => ({
  state: state as 'valid',
  daysLeft,
  dueOn: null,
  awaySince,
  needsAttention: state !== 'valid',
});

describe('what the bench offers', () => {
  it('offers only studies that take captures', () => {
    const studies = ['draft', 'running', 'returned', 'in-review', 'approved', 'archived'].map(
      (s, i) => ({ id: i + 1, status: s }),
    );
    expect(capturableStudies(studies).map((s) => s.status)).toEqual([
      'draft',
      'running',
      'returned',
    ]);
  });

  it('never offers retired equipment, nor a reference as an instrument', () => {
    const instruments = [
      { id: 1, kind: 'counter', retiredAt: null },
      { id: 2, kind: 'counter', retiredAt: '2026-11-01T00:00:00Z' },
      { id: 3, kind: 'reference', retiredAt: null },
      { id: 4, kind: 'thermometer', retiredAt: null },
    ];
    expect(offeredInstruments(instruments).map((i) => i.id)).toEqual([1, 4]);
    expect(
      offeredReferences([
        { id: 5, retiredAt: null },
        { id: 6, retiredAt: '2026-10-01T00:00:00Z' },
      ]).map((r) => r.id),
    ).toEqual([5]);
  });

  it('leaves archived DUTs and checkpoints out of a study', () => {
    const detail = {
      id: 9,
      title: 'Wash',
      duts: [
        { id: 1, label: 'Y1', nominal: 16e6 },
        { id: 2, label: 'Y2', nominal: 16e6, archived: true },
      ],
      checkpoints: [
        { id: 10, name: 'Baseline', order: 0 },
        { id: 11, name: 'Old', order: 1, archived: true },
        { id: 12, name: 'After wash', order: 2, archived: false },
      ],
    } as unknown as StudyDetail;
    const s = benchStudyOf(detail);
    expect(s.duts.map((d) => d.id)).toEqual([1]);
    expect(s.checkpoints.map((c) => c.id)).toEqual([10, 12]);
    expect(s.title).toBe('Wash');
  });

  it('offers an SPI bridge for an accelerometer and a counter otherwise, never a thermometer', () => {
    const list = [
      { id: 1, kind: 'counter' },
      { id: 2, kind: 'spi-bridge' },
      { id: 3, kind: 'thermometer' },
      { id: 4, kind: 'counter' },
    ];
    expect(suitableInstruments(list, false).map((i) => i.id)).toEqual([1, 4]);
    expect(suitableInstruments(list, true).map((i) => i.id)).toEqual([2]);
    expect(thermometerOf(list)?.id).toBe(3);
    expect(thermometerOf(list.slice(0, 2))).toBeNull();
  });

  it('offers the SPI bridge preset for an accelerometer and the counter presets otherwise', () => {
    expect(presetsFor(true).map((p) => p.id)).toEqual(['spi-bridge']);
    expect(presetsFor(false).map((p) => p.id)).toEqual(['scpi-counter', 'talk-counter']);
  });
});

describe('what the bench preselects', () => {
  it('keeps a choice that is still offered, else takes the first option', () => {
    const options = [{ id: 4 }, { id: 7 }];
    expect(keptOrFirst(7, options)).toBe(7);
    expect(keptOrFirst(5, options)).toBe(4);
    expect(keptOrFirst(null, options)).toBe(4);
    expect(keptOrFirst(7, [])).toBeNull();
  });

  it('starts with the remembered reference while offered, else the lab reference, else the first', () => {
    const refs = [
      { id: 1, labDefault: false },
      { id: 2, labDefault: true },
      { id: 3, labDefault: false },
    ];
    expect(defaultReferenceId(refs, 3)).toBe(3);
    expect(defaultReferenceId(refs, 99)).toBe(2);
    expect(defaultReferenceId(refs, null)).toBe(2);
    expect(defaultReferenceId([{ id: 5, labDefault: false }], null)).toBe(5);
    expect(defaultReferenceId([], 3)).toBeNull();
  });

  it('opens the named or remembered study while it takes captures, else the first, and says why', () => {
    const studies = [{ id: 3 }, { id: 8 }];
    expect(defaultStudy(studies, 8, true)).toEqual({ studyId: 8, notice: null });
    expect(defaultStudy(studies, 5, false)).toEqual({ studyId: 3, notice: null });
    expect(defaultStudy(studies, 5, true)).toEqual({
      studyId: 3,
      notice:
        'The study the link named does not take captures now (it is in review, approved or gone).',
    });
    expect(defaultStudy([], null, false)).toEqual({ studyId: null, notice: null });
  });

  it('says which of a link’s choices are not part of the study', () => {
    expect(pickMissNotice('Wash', [])).toBeNull();
    expect(pickMissNotice('Wash', ['dut'])).toBe(
      'The dut the link named is not part of “Wash”: choose again.',
    );
    expect(pickMissNotice('Wash', ['checkpoint', 'dut'])).toBe(
      'The checkpoint and dut the link named are not part of “Wash”: choose again.',
    );
  });

  it('queries an accelerometer, lies it flat unless posed, and shortens a counter’s long gate', () => {
    expect(accelerometerDefaults({ gateTime: 100, orientation: null })).toEqual({
      mode: 'query',
      orientation: 'flat',
      gateTime: 0.1,
    });
    expect(accelerometerDefaults({ gateTime: 10, orientation: 'inverted' })).toEqual({
      mode: 'query',
      orientation: 'inverted',
      gateTime: 10,
    });
  });
});

describe('warnings and notes', () => {
  it('warns of equipment overdue or away, and of a counter without a due date', () => {
    expect(
      equipmentWarning({
        name: 'Counter C-1',
        calibration: status('overdue', -5),
        calibrationDue: '2026-11-27',
      }),
    ).toBe(
      'Counter C-1: calibration overdue by 5 days (due 27 Nov 2026). Its readings carry no valid calibration.',
    );
    expect(
      equipmentWarning({
        name: 'T-1',
        calibration: status('overdue', -1),
        calibrationDue: '2026-12-01',
      }),
    ).toBe(
      'T-1: calibration overdue by 1 day (due 1 Dec 2026). Its readings carry no valid calibration.',
    );
    expect(
      equipmentWarning({ name: 'GPS', calibration: status('away', 3, '2026-11-20T08:00:00Z') }),
    ).toBe('GPS is recorded as away for calibration since 20 Nov 2026: is it really on the bench?');
    const undated = { name: 'Counter C-2', calibration: status('no-due-date', null) };
    expect(equipmentWarning(undated, true)).toBe(
      'Counter C-2 has no calibration due date on record.',
    );
    expect(equipmentWarning(undated, false)).toBeNull();
    expect(equipmentWarning({ name: 'C-3', calibration: status('valid', 200) }, true)).toBeNull();
    expect(equipmentWarning(null)).toBeNull();
  });

  it('refuses a simulator link only for a study that takes real instruments only', () => {
    expect(simulatedRefused('simulator', { allowSimulated: false })).toBe(true);
    expect(simulatedRefused('serial', { allowSimulated: false })).toBe(false);
    expect(simulatedRefused('simulator', { allowSimulated: true })).toBe(false);
    expect(simulatedRefused('simulator', null)).toBe(false);
  });

  it('says what the simulator plays, or which profile the instrument runs', () => {
    const base = {
      linkKind: 'simulator' as const,
      accelerometer: false,
      simulatorPreset: 'tf-32k' as const,
      checkpoint: { name: 'After wash', index: 1 },
      instrumentProfile: null,
    };
    expect(profileNote(base)).toBe(
      'The simulated counter plays a 32.768 kHz tuning fork, as at checkpoint 2 (After wash). Captures from it are marked “simulated”.',
    );
    expect(profileNote({ ...base, accelerometer: true, checkpoint: null })).toBe(
      'The simulated SPI bridge plays an accelerometer. Captures from it are marked “simulated”.',
    );
    expect(profileNote({ ...base, linkKind: 'serial' })).toBe(
      'The instrument has no profile of its own: choose a preset.',
    );
    const own = { ...linkPreset('scpi-counter'), name: 'Bench counter SCPI' };
    expect(profileNote({ ...base, linkKind: 'serial', instrumentProfile: own })).toBe(
      "The instrument's own profile: Bench counter SCPI.",
    );
  });

  it('takes a thermometer reading to 0.1 °C and notes it to 0.01 °C', () => {
    // rounding: 22.849 → 22.8 (to 0.1), "22.85" (to 0.01); common practice, no source
    expect(ambientReading(22.849, 'Bench thermometer T-1')).toEqual({
      ambientC: 22.8,
      note: 'Read from Bench thermometer T-1: 22.85 °C',
    });
    expect(ambientReading(23.06, null).note).toBe('Read from the thermometer: 23.06 °C');
  });
});
