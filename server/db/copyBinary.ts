/**
 * Readings in PostgreSQL's binary COPY format, for `COPY readings (capture_id, seq, t, value,
 * flags) FROM STDIN (FORMAT binary)`: no number is printed in Node or parsed by PostgreSQL, and
 * every double arrives bit for bit (as with the binary array parameters of binaryArrays.ts).
 *
 * Layout (PostgreSQL's documentation of COPY, "Binary Format"): the 11-byte signature
 * `PGCOPY\n\377\r\n\0`, an int32 flags field (0) and an int32 header-extension length (0); then
 * per row an int16 field count and, per field, an int32 byte length and the value in its type's
 * binary send form (big-endian); then the int16 trailer −1.
 */
const SIGNATURE = Buffer.from([0x50, 0x47, 0x43, 0x4f, 0x50, 0x59, 0x0a, 0xff, 0x0d, 0x0a, 0x00]);
/** Bytes of one row: field count, then int4, int4, float8, float8, int2, each with its length. */
const ROW_BYTES = 2 + (4 + 4) + (4 + 4) + (4 + 8) + (4 + 8) + (4 + 2);

/** The COPY statement the rows of {@link readingsCopyBinary} are for. */
export const READINGS_COPY_SQL =
  'COPY readings (capture_id, seq, t, value, flags) FROM STDIN (FORMAT binary)';

/** The binary COPY header: signature, flags (0), header-extension length (0). */
export const COPY_BINARY_HEADER = Buffer.concat([SIGNATURE, Buffer.alloc(8)]);
/** The binary COPY trailer: a field count of −1. */
export const COPY_BINARY_TRAILER = Buffer.from([0xff, 0xff]);

/**
 * One capture's readings, column by column (equal lengths), as a binary COPY body. `seq` must be
 * whole numbers in the int32 range and `flags` in the int16 range (the ingest checks both).
 */
export function readingsCopyBinary(
  captureId: number,
  seq: ArrayLike<number>,
  t: ArrayLike<number>,
  value: ArrayLike<number>,
  flags: ArrayLike<number>,
): Buffer {
  return Buffer.concat([
    COPY_BINARY_HEADER,
    readingsCopyRows(captureId, seq, t, value, flags),
    COPY_BINARY_TRAILER,
  ]);
}

/**
 * The rows alone of a binary COPY body (no header, no trailer): bodies of several batches of one
 * capture are sent as header, each batch's rows in seq order, trailer — one COPY for all of them.
 */
export function readingsCopyRows(
  captureId: number,
  seq: ArrayLike<number>,
  t: ArrayLike<number>,
  value: ArrayLike<number>,
  flags: ArrayLike<number>,
): Buffer {
  const n = seq.length;
  const buf = Buffer.allocUnsafe(n * ROW_BYTES);
  // DataView's setters (big-endian by default) are inlined by V8; Buffer's write*BE methods check
  // their arguments on every call and cost about twice as much per row here.
  const dv = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
  let o = 0;
  for (let i = 0; i < n; i++) {
    dv.setInt16(o, 5);
    dv.setInt32(o + 2, 4);
    dv.setInt32(o + 6, captureId);
    dv.setInt32(o + 10, 4);
    dv.setInt32(o + 14, seq[i]);
    dv.setInt32(o + 18, 8);
    dv.setFloat64(o + 22, t[i]);
    dv.setInt32(o + 30, 8);
    dv.setFloat64(o + 34, value[i]);
    dv.setInt32(o + 42, 2);
    dv.setInt16(o + 46, flags[i]);
    o += ROW_BYTES;
  }
  return buf;
}
