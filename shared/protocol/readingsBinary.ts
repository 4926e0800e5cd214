/**
 * A compact body for `POST /api/captures/:id/readings`, beside the JSON one: with
 * `Content-Type: application/vnd.driftbench.readings+f64` the body is four little-endian IEEE 754
 * doubles per reading — seq, t, value, flags — and nothing else (32 bytes a reading). The server
 * reads it without a JSON parse and checks it by the same rules as `findBadReading`; the answer is
 * the same `IngestResult`. Doubles carry every seq (< 2³¹) and flag exactly.
 */
import { MAX_BATCH, type ReadingIn } from './captures.js';

export const READINGS_F64_TYPE = 'application/vnd.driftbench.readings+f64';
export const BYTES_PER_READING = 32;

/** The readings as the binary body. */
export function encodeReadingsF64(readings: readonly ReadingIn[]): Uint8Array {
  const out = new Uint8Array(readings.length * BYTES_PER_READING);
  const view = new DataView(out.buffer);
  for (let i = 0; i < readings.length; i++) {
    const r = readings[i];
    const o = i * BYTES_PER_READING;
    view.setFloat64(o, r.seq, true);
    view.setFloat64(o + 8, r.t, true);
    view.setFloat64(o + 16, r.value, true);
    view.setFloat64(o + 24, r.flags ?? 0, true);
  }
  return out;
}

/** A batch as four columns, index for index. */
export interface ReadingColumns {
  seq: number[];
  t: number[];
  value: number[];
  flags: number[];
}

/**
 * The readings of a binary body as columns, or the first problem (`index` −1 for the body as a
 * whole) by the rules of `findBadReading`.
 */
export function decodeReadingsF64(
  bytes: Uint8Array,
): ReadingColumns | { index: number; reason: string } {
  if (bytes.byteLength % BYTES_PER_READING !== 0) {
    return {
      index: -1,
      reason: `a binary batch is ${BYTES_PER_READING} bytes a reading (seq, t, value, flags as little-endian doubles)`,
    };
  }
  const n = bytes.byteLength / BYTES_PER_READING;
  if (n > MAX_BATCH)
    return { index: MAX_BATCH, reason: `a batch holds at most ${MAX_BATCH} readings` };
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const cols: ReadingColumns = {
    seq: new Array(n),
    t: new Array(n),
    value: new Array(n),
    flags: new Array(n),
  };
  for (let i = 0; i < n; i++) {
    const o = i * BYTES_PER_READING;
    const seq = view.getFloat64(o, true);
    const t = view.getFloat64(o + 8, true);
    const value = view.getFloat64(o + 16, true);
    const flags = view.getFloat64(o + 24, true);
    if (!Number.isInteger(seq) || seq < 0 || seq > 2_147_483_647)
      return { index: i, reason: 'seq must be a whole number from 0' };
    if (!Number.isFinite(t)) return { index: i, reason: 't must be a finite number of seconds' };
    if (!Number.isFinite(value)) return { index: i, reason: 'value must be a finite number' };
    if (!Number.isInteger(flags) || flags < 0 || flags > 32767)
      return { index: i, reason: 'flags must be a whole number from 0 to 32767' };
    cols.seq[i] = seq;
    cols.t[i] = t;
    cols.value[i] = value;
    cols.flags[i] = flags;
  }
  return cols;
}
