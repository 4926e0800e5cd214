import { describe, expect, it } from 'vitest';
import type { z } from 'zod';
import {
  boundsOf,
  inputBounds,
  maxLengthOf,
  useZodForm,
} from '../../../src/composables/useZodForm';
import { parse } from '../../../server/middleware/validate';
import {
  CheckpointCreate,
  DutCreate,
  LoginRequest,
  UserCreate,
} from '../../../shared/protocol/api';
import { CheckpointPatch } from '../../../shared/protocol/studyEdit';
import { calibrationRecordSchema, InstrumentCreate } from '../../../shared/protocol/equipment';
import { PasswordChange, PasswordChangeForm } from '../../../shared/protocol/password';
import { EXPOSURE_FIELDS, Exposure, PROCESS_KINDS } from '../../../shared/protocol/process';
import { ReturnBody } from '../../../shared/protocol/review';
import { CaptureImportFields } from '../../../shared/protocol/importCsv';
import { CapturePatch } from '../../../shared/protocol/captures';
import { LinkProfile } from '../../../shared/protocol/linkProfile';
import { ReferenceCreate } from '../../../shared/protocol/uncertainty';

/** The fields the API names in its 400 for `body` (the server's own parse), with their messages. */
function apiErrors(schema: z.ZodType, body: unknown): Record<string, string> {
  try {
    parse(schema, body);
    return {};
  } catch (error) {
    const details = (error as { details: Array<{ path: string; message: string }> }).details;
    return Object.fromEntries(details.map((d) => [d.path, d.message]));
  }
}

/** The fields the form's adapter flags for the same body, with the form's words. */
function formErrors(
  schema: z.ZodType,
  body: unknown,
  wording?: Parameters<typeof useZodForm>[0]['wording'],
) {
  return useZodForm({ schema, body: () => body, fields: [], wording }).check().errors;
}

// Each row: a dialog's request schema, a body it must refuse, and the fields the API names.
// The expected fields and limits are the rules written in shared/protocol (the schema files named).
const CASES: Array<{ dialog: string; schema: z.ZodType; body: unknown; fields: string[] }> = [
  {
    dialog: 'CalibrationRecordDialog (instrument): a calibration dated in 2190',
    schema: calibrationRecordSchema('instrument'),
    // 2190-01-01 lies after any day this test runs and inside CalendarDate's range (to 2199).
    body: { calibratedOn: '2190-01-01', certificate: 'C-1', issuedBy: 'Lab' },
    fields: ['calibratedOn'],
  },
  {
    dialog: 'CalibrationRecordDialog (reference): no offset, no uncertainty',
    schema: calibrationRecordSchema('reference'),
    body: { calibratedOn: '2026-01-05', certificate: 'C-1', issuedBy: 'Lab' },
    fields: ['fractionalOffset', 'standardUncertainty'],
  },
  {
    dialog: 'CalibrationRecordDialog: due before the calibration',
    schema: calibrationRecordSchema('instrument'),
    body: { calibratedOn: '2026-01-05', dueOn: '2026-01-01', certificate: 'C', issuedBy: 'L' },
    fields: ['dueOn'],
  },
  {
    dialog: 'DutCreateDialog: no label, and the upper bound below the lower one',
    schema: DutCreate,
    body: {
      label: '',
      kind: 'crystal',
      nominal: 8e6,
      unit: 'Hz',
      limitLow: 2,
      limitHigh: 1,
      limitUnit: 'ppm',
    },
    fields: ['label', 'limitHigh'],
  },
  {
    dialog: 'DutCreateDialog: no limit unit',
    schema: DutCreate,
    body: { label: 'Y1', kind: 'crystal', nominal: 8e6, unit: 'Hz', limitLow: 2, limitHigh: 1 },
    fields: ['limitUnit'],
  },
  {
    dialog: 'DutCreateDialog: bounds the wrong way round',
    schema: DutCreate,
    body: {
      label: 'Y1',
      kind: 'crystal',
      nominal: 8e6,
      unit: 'Hz',
      limitLow: 2,
      limitHigh: 1,
      limitUnit: 'ppm',
    },
    fields: ['limitHigh'],
  },
  {
    dialog: 'CheckpointCreateDialog: a reflow peak of 50 °C',
    schema: CheckpointCreate,
    body: { name: 'After reflow', exposure: { kind: 'reflow', peakC: 50, passes: 1 } },
    fields: ['exposure.peakC'],
  },
  {
    dialog: 'CheckpointCreateDialog (edit): no name, and cycling from 85 °C down to −40 °C',
    schema: CheckpointPatch,
    body: {
      name: '',
      exposure: { kind: 'thermal-cycling', lowC: 85, highC: -40, dwellMinutes: 15, cycles: 10 },
    },
    fields: ['name', 'exposure.highC'],
  },
  {
    dialog: 'InstrumentFormDialog: no name',
    schema: InstrumentCreate,
    body: { name: ' ', kind: 'counter' },
    fields: ['name'],
  },
  {
    dialog: 'ReferenceFormDialog: a negative standard uncertainty',
    schema: ReferenceCreate,
    body: { name: 'OCXO', nominalHz: 1e7, fractionalOffset: 0, standardUncertainty: -1e-11 },
    fields: ['standardUncertainty'],
  },
  {
    dialog: 'UserCreateDialog: a short first password, no e-mail',
    schema: UserCreate,
    body: { name: 'Pat', email: '', role: 'viewer', password: 'short' },
    fields: ['email', 'password'],
  },
  {
    dialog: 'PasswordChangeForm: the new password is the current one',
    schema: PasswordChange,
    body: { currentPassword: 'bench words to keep', newPassword: 'bench words to keep' },
    fields: ['newPassword'],
  },
  {
    dialog: 'StudyReviewDialog (return): no comment',
    schema: ReturnBody,
    body: { comment: '   ' },
    fields: ['comment'],
  },
  {
    dialog: 'SignInView: not an e-mail address',
    schema: LoginRequest,
    body: { email: 'bench', password: 'x' },
    fields: ['email'],
  },
];

describe('forms check what the API checks (useZodForm over the shared request schemas)', () => {
  it.each(CASES)('$dialog', ({ schema, body, fields }) => {
    const api = apiErrors(schema, body);
    const form = formErrors(schema, body);
    expect(Object.keys(api).sort()).toEqual([...fields].sort());
    expect(Object.keys(form).sort()).toEqual(Object.keys(api).sort());
  });

  it('words a refused limit with the schema’s own bound', () => {
    // ReflowExposure (shared/protocol/process.ts) takes a peak of 100 to 400 °C.
    expect(boundsOf(Exposure, ['peakC'], 'reflow')).toEqual({ min: 100, max: 400 });
    const body = { name: 'After reflow', exposure: { kind: 'reflow', peakC: 50, passes: 1 } };
    expect(formErrors(CheckpointCreate, body)['exposure.peakC']).toBe('Use 100 or more');
    expect(apiErrors(CheckpointCreate, body)['exposure.peakC']).toMatch(/100/);
  });

  it('keeps the server’s words inside the form’s sentence where the form asks for it', () => {
    // The password policy (shared/protocol/password.ts): at least 12 characters.
    const errors = formErrors(
      UserCreate,
      { name: 'Pat', email: 'pat@lab.example', role: 'viewer', password: 'short' },
      { password: (m) => `The password ${m}` },
    );
    expect(errors.password).toBe('The password must be at least 12 characters');
    const api = apiErrors(PasswordChange, { currentPassword: 'a', newPassword: 'short' });
    expect(api.newPassword).toBe('must be at least 12 characters');
  });

  it('checks the repeated new password in the browser only (the request does not carry it)', () => {
    const body = {
      currentPassword: 'old bench words',
      newPassword: 'new bench words 1',
      repeat: 'new bench words 2',
    };
    expect(Object.keys(formErrors(PasswordChangeForm, body))).toEqual(['repeat']);
    const { repeat, ...request } = body;
    expect(repeat).not.toBe(request.newPassword);
    expect(apiErrors(PasswordChange, request)).toEqual({});
  });

  it('shows a cross-field issue on the first field of a list that is on screen', async () => {
    // DutCreate's checkLimit (shared/protocol/uncertainty.ts) names `limit` when no bound is given.
    const body = { label: 'Y1', kind: 'crystal', nominal: 8e6, unit: 'Hz', limitUnit: 'ppm' };
    const { rules } = useZodForm({
      schema: DutCreate,
      body: () => body,
      fields: { limitLow: ['limitLow', 'limit'] },
    });
    type Validator = (rule: object, value: unknown, done: (e?: Error) => void) => void;
    const rule = (rules.value.limitLow as Array<{ validator: Validator }>)[0];
    const message = await new Promise<string | undefined>((resolve) =>
      rule.validator({}, undefined, (e?: Error) => resolve(e?.message)),
    );
    expect(message).toBe('Give the limit (or a lower and/or upper bound)');
  });

  it('shows a field’s message only after the first submit, and follows the fields from then on', async () => {
    const body = { name: '', kind: 'counter' };
    const form = useZodForm({
      schema: InstrumentCreate,
      body: () => body,
      fields: ['name', 'kind'],
      wording: { name: 'Name the instrument' },
    });
    expect(form.errorOf('name')).toBe('');
    expect(await form.validate()).toBe(false);
    expect(form.errorOf('name')).toBe('Name the instrument');
    expect(form.errorOf('kind')).toBe('');
    body.name = 'Counter C-2';
    expect(form.errorOf('name')).toBe('');
    expect(await form.validate()).toBe(true);
    body.name = '';
    form.clear();
    expect(form.errorOf('name')).toBe('');
  });

  it('gives numeric inputs the schema’s limits, through coercion, defaults and optional', () => {
    // CaptureImportFields (shared/protocol/importCsv.ts): gate 0.001–1000 s, skip 0–10,000 lines.
    expect(inputBounds(CaptureImportFields, ['gateTime'])).toEqual({ min: 0.001, max: 1000 });
    expect(inputBounds(CaptureImportFields, ['skipLines'])).toEqual({ min: 0, max: 10_000 });
    // CapturePatch (shared/protocol/captures.ts): ambient −60 to 150 °C.
    expect(inputBounds(CapturePatch, ['ambientC'])).toEqual({ min: -60, max: 150 });
    // LinkProfile (shared/protocol/linkProfile.ts): 0–10 retries; a hex-spi value at byte 0–63.
    expect(inputBounds(LinkProfile, ['retries'])).toEqual({ min: 0, max: 10 });
    expect(inputBounds(LinkProfile, ['hexSpi', 'offset'])).toEqual({ min: 0, max: 63 });
    // No bound stated: the input stays open.
    expect(inputBounds(DutCreate, ['limitLow'])).toEqual({ min: -Infinity, max: Infinity });
  });

  it('gives a textarea the schema’s length: a return comment up to 4000 characters', () => {
    // ReturnBody (shared/protocol/review.ts): Words(4000), then at least one character.
    expect(maxLengthOf(ReturnBody, ['comment'])).toBe(4000);
  });

  it('describes every figure of every process kind, and only those', () => {
    const variants = (Exposure as unknown as { options: Array<z.ZodObject> }).options;
    for (const kind of PROCESS_KINDS) {
      const shape = variants.find(
        (v) => (v.shape.kind as unknown as { value: string }).value === kind,
      )!.shape;
      const schemaKeys = Object.keys(shape).filter(
        (k) => !['kind', 'process', 'notes'].includes(k),
      );
      const formKeys = EXPOSURE_FIELDS[kind].flatMap((f) =>
        f.unitKey ? [f.key, f.unitKey] : [f.key],
      );
      expect(formKeys.sort(), kind).toEqual(schemaKeys.sort());
    }
  });
});
