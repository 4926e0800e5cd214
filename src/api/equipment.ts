/**
 * The lab's equipment pages: one typed call per endpoint. The calibration state comes from the
 * server with every instrument and reference (`calibration`); the client only words it.
 */
import { http } from './http';
import type {
  CalibrationHistory,
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
  return (await http.get<{ instrument: InstrumentOut }>(`/api/instruments/${id}`)).instrument;
}

/** POST /api/instruments (admins). */
export async function registerInstrument(body: InstrumentCreate): Promise<InstrumentOut> {
  return (await http.post<{ instrument: InstrumentOut }>('/api/instruments', body)).instrument;
}

/** PATCH /api/instruments/:id (admins). */
export async function editInstrument(id: number, patch: InstrumentPatch): Promise<InstrumentOut> {
  return (await http.patch<{ instrument: InstrumentOut }>(`/api/instruments/${id}`, patch))
    .instrument;
}

/** GET /api/instruments/:id/calibrations: newest first. */
export async function instrumentCalibrations(id: number): Promise<CalibrationRecord[]> {
  return (await http.get<CalibrationHistory>(`/api/instruments/${id}/calibrations`)).calibrations;
}

/** POST /api/instruments/:id/calibrations (admins). */
export async function recordInstrumentCalibration(
  id: number,
  body: CalibrationRecordCreate,
): Promise<InstrumentCalibrated> {
  return http.post<InstrumentCalibrated>(`/api/instruments/${id}/calibrations`, body);
}

/** POST /api/instruments/:id/away (admins): sent to a calibration lab. */
export async function sendInstrumentAway(
  id: number,
  body: EquipmentAway = {},
): Promise<InstrumentOut> {
  return (await http.post<{ instrument: InstrumentOut }>(`/api/instruments/${id}/away`, body))
    .instrument;
}

/** POST /api/instruments/:id/retire (admins). */
export async function retireInstrument(id: number, body: EquipmentRetire): Promise<InstrumentOut> {
  return (await http.post<{ instrument: InstrumentOut }>(`/api/instruments/${id}/retire`, body))
    .instrument;
}

/** POST /api/instruments/:id/reinstate (admins): back in service. */
export async function reinstateInstrument(id: number): Promise<InstrumentOut> {
  return (await http.post<{ instrument: InstrumentOut }>(`/api/instruments/${id}/reinstate`, {}))
    .instrument;
}

/** GET /api/references/:id. */
export async function fetchReferenceRecord(id: number): Promise<ReferenceOut> {
  return (await http.get<{ reference: ReferenceOut }>(`/api/references/${id}`)).reference;
}

/** GET /api/references/:id/calibrations: newest first. */
export async function referenceCalibrations(id: number): Promise<CalibrationRecord[]> {
  return (await http.get<CalibrationHistory>(`/api/references/${id}/calibrations`)).calibrations;
}

/** POST /api/references/:id/calibrations (admins, leads). */
export async function recordReferenceCalibration(
  id: number,
  body: CalibrationRecordCreate,
): Promise<ReferenceCalibrated> {
  return http.post<ReferenceCalibrated>(`/api/references/${id}/calibrations`, body);
}

/** POST /api/references/:id/away (admins, leads). */
export async function sendReferenceAway(
  id: number,
  body: EquipmentAway = {},
): Promise<ReferenceOut> {
  return (await http.post<{ reference: ReferenceOut }>(`/api/references/${id}/away`, body))
    .reference;
}

/** POST /api/references/:id/retire (admins, leads). */
export async function retireReference(id: number, body: EquipmentRetire): Promise<ReferenceOut> {
  return (await http.post<{ reference: ReferenceOut }>(`/api/references/${id}/retire`, body))
    .reference;
}

/** POST /api/references/:id/reinstate (admins, leads). */
export async function reinstateReference(id: number): Promise<ReferenceOut> {
  return (await http.post<{ reference: ReferenceOut }>(`/api/references/${id}/reinstate`, {}))
    .reference;
}

/** POST /api/references/:id/lab-default (admins, leads): the bench's default reference. */
export async function makeLabReference(id: number): Promise<ReferenceOut> {
  return (await http.post<{ reference: ReferenceOut }>(`/api/references/${id}/lab-default`, {}))
    .reference;
}
