/**
 * One value as a link delivers it to the bench, before the server has seen it.
 *
 * `seq` numbers readings from 0 within a capture; `t` is seconds since the link reader
 * started; `value` is in the profile's unit (NaN when the reading is a placeholder for a
 * garbled or timed-out poll); `flags` is a bit set of {@link ReadingFlag}.
 */
export interface LinkReading {
  seq: number;
  t: number;
  value: number;
  flags: number;
  /** The line as received, kept for logs and for the SPI console. */
  raw?: string;
}

/** Bits of {@link LinkReading.flags}; combine with `|`, test with {@link hasFlag}. */
export const ReadingFlag = {
  none: 0,
  /** The line carried bytes outside printable ASCII, or did not parse. */
  garbled: 1 << 0,
  /** A query got no usable answer within its timeout and retries. */
  timeout: 1 << 1,
  /** The instrument reported an overrange (SCPI's 9.9E+37 convention). */
  overrange: 1 << 2,
  /** The line was longer than the framer's limit and was cut. */
  overlong: 1 << 3,
  /** The line ended without its terminator (stream closed mid-line). */
  partial: 1 << 4,
  /**
   * Set by the server at ingest, never by a link: the value is implausible for the capture (see
   * shared/protocol/plausibility.ts for the rule). Kept in the database, left out of the analysis
   * like every other flagged reading.
   */
  implausible: 1 << 5,
} as const;

export type ReadingFlagName = keyof typeof ReadingFlag;

/** True when `flags` has every bit of `flag` set. */
export function hasFlag(flags: number, flag: number): boolean {
  return (flags & flag) === flag && flag !== 0;
}

/** Names of the bits set in `flags`, for display and logs. */
export function flagNames(flags: number): ReadingFlagName[] {
  return (Object.keys(ReadingFlag) as ReadingFlagName[]).filter(
    (k) => ReadingFlag[k] !== 0 && (flags & ReadingFlag[k]) !== 0,
  );
}
