/**
 * What the bench's setup form offers and preselects, as plain functions (no Vue, no network):
 * the studies that take captures, the equipment in service, the instrument that suits the DUT,
 * the lab reference, the study a link named, the accelerometer's defaults, the warnings for
 * equipment overdue or away, and the note on the link. The form (BenchSetupForm.vue) and its
 * loader (useBenchOptions.ts) call these; tests/unit/client/benchOffer.test.ts checks each one.
 */
import { LINK_PRESETS, type LinkPreset, type LinkProfile } from '../../shared/protocol/linkProfile';
import type { StaticOrientation } from '../../shared/analysis/tiltCheck';
import type { CalibrationStatus } from '../../shared/protocol/equipment';
import type { StudyDetail } from '../api/studies';
import { formatDate } from './format';
import type { BenchStudy, SimulatorPreset } from './benchPlanning';

// ---- What is offered -------------------------------------------------------------------------

/** Study states that take new captures (a study in review, approved or archived does not). */
const CAPTURING = ['draft', 'running', 'returned'];

/** The studies the bench offers: those that take captures now. */
export function capturableStudies<S extends { status: string }>(studies: readonly S[]): S[] {
  return studies.filter((s) => CAPTURING.includes(s.status));
}

/** Instruments offered at all: retired ones stay on record but are never offered; a reference is offered as a reference. */
export function offeredInstruments<I extends { kind: string; retiredAt: string | null }>(
  instruments: readonly I[],
): I[] {
  return instruments.filter((i) => i.kind !== 'reference' && !i.retiredAt);
}

/** References offered: every one not retired. */
export function offeredReferences<R extends { retiredAt: string | null }>(
  references: readonly R[],
): R[] {
  return references.filter((r) => !r.retiredAt);
}

/**
 * A study as the bench offers it: archived DUTs and checkpoints are out of the matrix, and the
 * server refuses captures of them.
 */
export function benchStudyOf(s: StudyDetail): BenchStudy {
  return {
    ...s,
    duts: s.duts.filter((d) => !d.archived).map((d) => ({ ...d, nominal: Number(d.nominal) })),
    checkpoints: s.checkpoints.filter((c) => !c.archived),
  };
}

/**
 * Only what can take the readings: an SPI bridge for an accelerometer, a counter otherwise; a
 * thermometer or other bench helper is never the capture instrument.
 */
export function suitableInstruments<I extends { kind: string }>(
  instruments: readonly I[],
  accelerometer: boolean,
): I[] {
  return instruments.filter((i) => i.kind === (accelerometer ? 'spi-bridge' : 'counter'));
}

/** The bench thermometer the ambient is read from (the first one in service), or null. */
export function thermometerOf<I extends { kind: string }>(instruments: readonly I[]): I | null {
  return instruments.find((i) => i.kind === 'thermometer') ?? null;
}

/** The link presets that fit the DUT: the SPI bridge for an accelerometer, the counters otherwise. */
export function presetsFor(accelerometer: boolean): Array<{ id: LinkPreset['id']; label: string }> {
  return LINK_PRESETS.filter((p) =>
    accelerometer ? p.id === 'spi-bridge' : p.id !== 'spi-bridge',
  ).map((p) => ({ id: p.id, label: p.label }));
}

// ---- What is preselected ---------------------------------------------------------------------

/** The current choice when it is among the options, else the first option (null when there is none). */
export function keptOrFirst(
  current: number | null,
  options: ReadonlyArray<{ id: number }>,
): number | null {
  if (options.some((o) => o.id === current)) return current;
  return options[0]?.id ?? null;
}

/**
 * The reference a session starts with: the remembered one while it is still offered, else the
 * lab's reference (or the first one offered); null only when none is offered.
 */
export function defaultReferenceId(
  references: ReadonlyArray<{ id: number; labDefault: boolean }>,
  current: number | null,
): number | null {
  if (current !== null && references.some((r) => r.id === current)) return current;
  const lab = references.find((r) => r.labDefault) ?? references[0];
  return lab?.id ?? null;
}

/**
 * The study the form opens with: the one a link named or the remembered one while it takes
 * captures, else the first study offered; `notice` says so when the link's study was refused.
 */
export function defaultStudy(
  studies: ReadonlyArray<{ id: number }>,
  current: number | null,
  fromLink: boolean,
): { studyId: number | null; notice: string | null } {
  if (studies.some((s) => s.id === current)) return { studyId: current, notice: null };
  return {
    studyId: studies[0]?.id ?? null,
    notice: fromLink
      ? 'The study the link named does not take captures now (it is in review, approved or gone).'
      : null,
  };
}

/** What the form says when the checkpoint or DUT a link named is not part of the study, or null. */
export function pickMissNotice(
  studyTitle: string,
  misses: ReadonlyArray<'checkpoint' | 'dut'>,
): string | null {
  if (!misses.length) return null;
  return `The ${misses.join(' and ')} the link named ${misses.length > 1 ? 'are' : 'is'} not part of “${studyTitle}”: choose again.`;
}

/**
 * The choices an accelerometer needs: the SPI bridge is queried, a pose is set (flat unless one
 * was chosen) and a counter's long gate becomes a 0.1 s sample interval.
 */
export function accelerometerDefaults(c: {
  gateTime: number;
  orientation: StaticOrientation | null;
}): { mode: 'query'; orientation: StaticOrientation; gateTime: number } {
  return {
    mode: 'query',
    orientation: c.orientation ?? 'flat',
    gateTime: c.gateTime > 10 ? 0.1 : c.gateTime,
  };
}

// ---- Warnings and notes ----------------------------------------------------------------------

/**
 * Equipment overdue or away for calibration is allowed, with a warning (the server's state, one
 * rule for every page); a counter without a due date is pointed out too.
 */
export function equipmentWarning(
  e: {
    name: string;
    calibration?: CalibrationStatus;
    calibrationDue?: string | null;
  } | null,
  counter = false,
): string | null {
  const c = e?.calibration;
  if (!e || !c) return null;
  if (c.state === 'overdue')
    return `${e.name}: calibration overdue by ${-(c.daysLeft ?? 0)} ${c.daysLeft === -1 ? 'day' : 'days'} (due ${formatDate(e.calibrationDue ?? null)}). Its readings carry no valid calibration.`;
  if (c.state === 'away')
    return `${e.name} is recorded as away for calibration since ${formatDate(c.awaySince)}: is it really on the bench?`;
  if (c.state === 'no-due-date' && counter)
    return `${e.name} has no calibration due date on record.`;
  return null;
}

/** A study that takes real instruments only refuses a simulator link (the server says so too). */
export function simulatedRefused(
  linkKind: 'simulator' | 'serial',
  study: { allowSimulated?: boolean } | null,
): boolean {
  return linkKind === 'simulator' && study !== null && study.allowSimulated === false;
}

/** What each simulator preset plays, in words (the preset ids are internal). */
export const SIMULATED_PARTS: Record<SimulatorPreset, string> = {
  'xtal-16m': '16 MHz crystal',
  'osc-25m': '25 MHz oscillator',
  'tf-32k': '32.768 kHz tuning fork',
  'tcxo-12m8': '12.8 MHz TCXO',
  accel: 'accelerometer',
};

/** The line under the link choice: what the simulator plays, or which profile the instrument runs. */
export function profileNote(c: {
  linkKind: 'simulator' | 'serial';
  accelerometer: boolean;
  simulatorPreset: SimulatorPreset;
  /** The chosen checkpoint and its place among the study's checkpoints (0 = the first). */
  checkpoint: { name: string; index: number } | null;
  instrumentProfile: LinkProfile | null;
}): string {
  if (c.linkKind === 'simulator') {
    const at = c.checkpoint
      ? `, as at checkpoint ${c.checkpoint.index + 1} (${c.checkpoint.name})`
      : '';
    const plays = c.accelerometer
      ? 'SPI bridge plays an accelerometer'
      : `counter plays a ${SIMULATED_PARTS[c.simulatorPreset]}`;
    return `The simulated ${plays}${at}. Captures from it are marked “simulated”.`;
  }
  return c.instrumentProfile
    ? `The instrument's own profile: ${c.instrumentProfile.name}.`
    : 'The instrument has no profile of its own: choose a preset.';
}

/** An ambient read from the thermometer, as the form takes it (0.1 °C) and the note beside it. */
export function ambientReading(
  celsius: number,
  thermometerName: string | null,
): { ambientC: number; note: string } {
  return {
    ambientC: Math.round(celsius * 10) / 10,
    note: `Read from ${thermometerName ?? 'the thermometer'}: ${celsius.toFixed(2)} °C`,
  };
}
