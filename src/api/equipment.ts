/**
 * The lab's equipment pages: one typed call per endpoint. The calibration state comes from the
 * server with every instrument and reference (`calibration`); the client only words it. Every
 * answer is typed by the route's response schema (`callRoute`, shared/protocol/responses.ts).
 */
import { callRoute } from './http';
import type {
  CalibrationRecord,
  CalibrationRecordCreate,
  EquipmentAway,
  EquipmentRetire,
  InstrumentCalibrated,
  InstrumentCreate,
  InstrumentOut,
  InstrumentPatch,
  ReferenceCalibrated,
  ReferenceOut,
} from '../../shared/protocol/equipment';

export type { CalibrationRecord, InstrumentOut, ReferenceOut };

/** GET /api/instruments/:id. */
export async function fetchInstrumentRecord(id: number): Promise<InstrumentOut> {
  return (await callRoute('GET /api/instruments/:id', { id })).instrument;
}

/** POST /api/instruments (admins). */
export async function registerInstrument(body: InstrumentCreate): Promise<InstrumentOut> {
  return (await callRoute('POST /api/instruments', {}, { body })).instrument;
}

/** PATCH /api/instruments/:id (admins). */
export async function editInstrument(id: number, patch: InstrumentPatch): Promise<InstrumentOut> {
  return (await callRoute('PATCH /api/instruments/:id', { id }, { body: patch })).instrument;
}

/** GET /api/instruments/:id/calibrations: newest first. */
export async function instrumentCalibrations(id: number): Promise<CalibrationRecord[]> {
  return (await callRoute('GET /api/instruments/:id/calibrations', { id })).calibrations;
}

/** POST /api/instruments/:id/calibrations (admins). */
export function recordInstrumentCalibration(
  id: number,
  body: CalibrationRecordCreate,
): Promise<InstrumentCalibrated> {
  return callRoute('POST /api/instruments/:id/calibrations', { id }, { body });
}

/** POST /api/instruments/:id/away (admins): sent to a calibration lab. */
export async function sendInstrumentAway(
  id: number,
  body: EquipmentAway = {},
): Promise<InstrumentOut> {
  return (await callRoute('POST /api/instruments/:id/away', { id }, { body })).instrument;
}

/** POST /api/instruments/:id/retire (admins). */
export async function retireInstrument(id: number, body: EquipmentRetire): Promise<InstrumentOut> {
  return (await callRoute('POST /api/instruments/:id/retire', { id }, { body })).instrument;
}

/** POST /api/instruments/:id/reinstate (admins): back in service. */
export async function reinstateInstrument(id: number): Promise<InstrumentOut> {
  return (await callRoute('POST /api/instruments/:id/reinstate', { id })).instrument;
}

/** GET /api/references/:id. */
export async function fetchReferenceRecord(id: number): Promise<ReferenceOut> {
  return (await callRoute('GET /api/references/:id', { id })).reference;
}

/** GET /api/references/:id/calibrations: newest first. */
export async function referenceCalibrations(id: number): Promise<CalibrationRecord[]> {
  return (await callRoute('GET /api/references/:id/calibrations', { id })).calibrations;
}

/** POST /api/references/:id/calibrations (admins, leads). */
export function recordReferenceCalibration(
  id: number,
  body: CalibrationRecordCreate,
): Promise<ReferenceCalibrated> {
  return callRoute('POST /api/references/:id/calibrations', { id }, { body });
}

/** POST /api/references/:id/away (admins, leads). */
export async function sendReferenceAway(
  id: number,
  body: EquipmentAway = {},
): Promise<ReferenceOut> {
  return (await callRoute('POST /api/references/:id/away', { id }, { body })).reference;
}

/** POST /api/references/:id/retire (admins, leads). */
export async function retireReference(id: number, body: EquipmentRetire): Promise<ReferenceOut> {
  return (await callRoute('POST /api/references/:id/retire', { id }, { body })).reference;
}

/** POST /api/references/:id/reinstate (admins, leads). */
export async function reinstateReference(id: number): Promise<ReferenceOut> {
  return (await callRoute('POST /api/references/:id/reinstate', { id })).reference;
}

/** POST /api/references/:id/lab-default (admins, leads): the bench's default reference. */
export async function makeLabReference(id: number): Promise<ReferenceOut> {
  return (await callRoute('POST /api/references/:id/lab-default', { id })).reference;
}
