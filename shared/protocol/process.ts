import { z } from 'zod';
import { Text } from './text.js';

/**
 * What a checkpoint's parts went through before it, by process kind. Each kind carries its own
 * figures and nothing else (a reflow has no bath frequency, a bake no minutes per side); the
 * stored JSON is checked against the same schema when it is written.
 */
export const PROCESS_KINDS = [
  'wash',
  'reflow',
  'bake',
  'thermal-cycling',
  'conformal-coat',
  'vibration',
  'other',
] as const;
export const ProcessKind = z.enum(PROCESS_KINDS, {
  message: `must be one of ${PROCESS_KINDS.join(', ')}`,
});
export type ProcessKind = z.infer<typeof ProcessKind>;

const num = (min: number, max: number) => z.number().finite().min(min).max(max);
const positive = (max: number) =>
  z.number().finite().positive('must be greater than zero').max(max);
const whole = (min: number, max: number) =>
  z.number().int('must be a whole number').min(min).max(max);

/** Fields every kind may carry: the lab's own name for the step and free notes. */
const common = {
  /** The lab's own name for the step, e.g. "Reflow, profile B". */
  process: Text({ max: 200 }).optional(),
  notes: Text({ max: 2000, trim: false }).optional(),
};

/** Ultrasonic or aqueous wash: every figure optional (a spray wash has no bath frequency). */
export const WashExposure = z.strictObject({
  kind: z.literal('wash'),
  ...common,
  bathKHz: positive(1000).optional(),
  temperatureC: num(-80, 400).optional(),
  solvent: Text({ max: 200 }).optional(),
  minutesPerSide: num(0, 100000).optional(),
  cumulativeMinutes: num(0, 1000000).optional(),
});

/** Reflow soldering: peak temperature and passes required; time above liquidus when known. */
export const ReflowExposure = z.strictObject({
  kind: z.literal('reflow'),
  ...common,
  peakC: num(100, 400),
  secondsAboveLiquidus: num(0, 3600).optional(),
  passes: whole(1, 50),
});

/** A bake (moisture drive-out, burn-in without power): temperature and hours. */
export const BakeExposure = z.strictObject({
  kind: z.literal('bake'),
  ...common,
  temperatureC: num(-80, 400),
  hours: positive(100000),
});

/** Thermal cycling in a chamber: low and high temperature, dwell at each end, and cycles. */
export const ThermalCyclingExposure = z
  .strictObject({
    kind: z.literal('thermal-cycling'),
    ...common,
    lowC: num(-196, 400),
    highC: num(-196, 400),
    dwellMinutes: positive(100000),
    cycles: whole(1, 1000000),
  })
  .refine((v) => v.lowC < v.highC, {
    path: ['highC'],
    message: 'must be above the low temperature',
  });

/** Conformal coating: the material and how it was cured. */
export const ConformalCoatExposure = z.strictObject({
  kind: z.literal('conformal-coat'),
  ...common,
  material: Text({ min: 1, max: 200 }),
  cure: Text({ max: 200 }).optional(),
});

export const VIBRATION_MODES = ['vibration', 'shock'] as const;
export const DURATION_UNITS = ['ms', 's', 'min', 'h'] as const;

/** Vibration (level in g rms) or shock (peak g), with its duration. */
export const VibrationExposure = z.strictObject({
  kind: z.literal('vibration'),
  ...common,
  mode: z.enum(VIBRATION_MODES, { message: 'must be vibration or shock' }),
  levelG: positive(100000),
  duration: positive(1000000),
  durationUnit: z.enum(DURATION_UNITS, { message: `must be one of ${DURATION_UNITS.join(', ')}` }),
});

/** Anything else, described in words. */
export const OtherExposure = z.strictObject({
  kind: z.literal('other'),
  ...common,
  description: Text({ min: 1, max: 500 }),
});

/** A checkpoint's exposure, validated per process kind (`kind` chooses the fields). */
export const Exposure = z.discriminatedUnion(
  'kind',
  [
    WashExposure,
    ReflowExposure,
    BakeExposure,
    ThermalCyclingExposure,
    ConformalCoatExposure,
    VibrationExposure,
    OtherExposure,
  ],
  {
    error: (issue) =>
      issue.code === 'invalid_union' ? `must be one of ${PROCESS_KINDS.join(', ')}` : undefined,
  },
);
export type Exposure = z.infer<typeof Exposure>;
export type WashExposure = z.infer<typeof WashExposure>;
export type ReflowExposure = z.infer<typeof ReflowExposure>;
export type BakeExposure = z.infer<typeof BakeExposure>;
export type ThermalCyclingExposure = z.infer<typeof ThermalCyclingExposure>;
export type ConformalCoatExposure = z.infer<typeof ConformalCoatExposure>;
export type VibrationExposure = z.infer<typeof VibrationExposure>;
export type OtherExposure = z.infer<typeof OtherExposure>;

/**
 * How a form asks for one figure of an exposure: its label and unit, what is typed (a decimal, a
 * whole number, words, or one of a few choices) and an example for the empty field (blank: the
 * schema's range). A figure with `unitKey` is typed with a unit chosen beside it; `shock` words a
 * vibration figure for a shock instead.
 */
export type ExposureFieldSpec = {
  key: string;
  label: string;
  unit?: string;
  input: 'decimal' | 'whole' | 'text' | 'choice';
  example?: string;
  /** For `choice`: the values and their words. */
  choices?: Readonly<Record<string, string>>;
  /** A companion field holding the unit, and the units offered. */
  unitKey?: string;
  units?: readonly string[];
  unitDefault?: string;
  /** Takes the whole row of the form. */
  wide?: boolean;
  shock?: { label: string; example: string };
};

/** Each process kind's figures in the order a form asks for them (the schemas above check them). */
export const EXPOSURE_FIELDS: Readonly<Record<ProcessKind, readonly ExposureFieldSpec[]>> = {
  wash: [
    {
      key: 'bathKHz',
      label: 'Bath frequency',
      unit: 'kHz',
      input: 'decimal',
      example: '40 (blank for a spray wash)',
    },
    { key: 'temperatureC', label: 'Temperature', unit: '°C', input: 'decimal', example: '45' },
    { key: 'minutesPerSide', label: 'Minutes per side', input: 'decimal', example: '3' },
    { key: 'cumulativeMinutes', label: 'Cumulative minutes', input: 'decimal', example: '6' },
    {
      key: 'solvent',
      label: 'Solvent',
      input: 'text',
      example: 'Aqueous detergent, 5 %',
      wide: true,
    },
  ],
  reflow: [
    { key: 'peakC', label: 'Peak temperature', unit: '°C', input: 'decimal' },
    {
      key: 'secondsAboveLiquidus',
      label: 'Time above liquidus',
      unit: 's',
      input: 'decimal',
      example: '60 (optional)',
    },
    { key: 'passes', label: 'Passes', input: 'whole', example: '1' },
  ],
  bake: [
    { key: 'temperatureC', label: 'Temperature', unit: '°C', input: 'decimal', example: '125' },
    { key: 'hours', label: 'Hours', input: 'decimal', example: '24' },
  ],
  'thermal-cycling': [
    { key: 'lowC', label: 'Low', unit: '°C', input: 'decimal', example: '-40' },
    { key: 'highC', label: 'High', unit: '°C', input: 'decimal', example: '85' },
    {
      key: 'dwellMinutes',
      label: 'Dwell at each end',
      unit: 'min',
      input: 'decimal',
      example: '15',
    },
    { key: 'cycles', label: 'Cycles', input: 'whole', example: '100' },
  ],
  'conformal-coat': [
    { key: 'material', label: 'Material', input: 'text', example: 'Acrylic coating' },
    { key: 'cure', label: 'Cure', input: 'text', example: '24 h at room temperature' },
  ],
  vibration: [
    {
      key: 'mode',
      label: 'Vibration or shock',
      input: 'choice',
      choices: { vibration: 'Vibration', shock: 'Shock' },
      wide: true,
    },
    {
      key: 'levelG',
      label: 'Level (g rms)',
      input: 'decimal',
      example: '7.7',
      shock: { label: 'Peak level (g)', example: '1500' },
    },
    {
      key: 'duration',
      label: 'Duration',
      input: 'decimal',
      example: '60',
      unitKey: 'durationUnit',
      units: DURATION_UNITS,
      unitDefault: 'min',
      shock: { label: 'Pulse duration', example: '0.5' },
    },
  ],
  other: [
    {
      key: 'description',
      label: 'What the parts went through',
      input: 'text',
      example: 'Stored 30 days in a dry cabinet',
      wide: true,
    },
  ],
};
