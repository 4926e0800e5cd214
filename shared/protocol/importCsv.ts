/**
 * Readings logged elsewhere (issue 12): the options of `POST /api/captures/import` and the one
 * row reader both the server (streaming a whole file) and the browser (previewing its first rows)
 * use, so the preview shows exactly the errors the import would give.
 *
 * A file is: an optional header block (blank lines, comment lines starting with `#`, `;`, `//`,
 * `%` or `!`, `Key: value` / `Key = value` metadata, lines with a single field), an optional
 * column-name row (no field starts like a number), then one reading per line. Once the first
 * reading has been read, every non-blank, non-comment line must be a good reading: the first bad
 * one is reported with its line number and column, and nothing is stored.
 */
import { z } from 'zod';
import { Text } from './text.js';
import {
  parseMeasurement,
  resolveUnit,
  unitFactor,
  type UnitQuantity as Quantity,
} from './parse.js';

export const TIME_FORMATS = ['seconds', 'iso8601', 'hms', 'none'] as const;
export type TimeFormat = (typeof TIME_FORMATS)[number];
export const TIME_FORMAT_LABELS: Record<TimeFormat, string> = {
  seconds: 'seconds from start (e.g. 12.5, or 12.5 s / 250 ms)',
  iso8601: 'ISO 8601 date and time (e.g. 2026-11-02T09:15:00.250Z; no zone means UTC)',
  hms: 'time of day HH:MM:SS.fff (e.g. 09:15:00.250)',
  none: 'no time column: one reading every τ0 = gate + dead time',
};

export const DELIMITERS = ['auto', ',', ';', '\t', '|'] as const;

/** Most readings one imported file may hold. */
export const MAX_IMPORT_ROWS = 5_000_000;
/** Largest file the import accepts. */
export const MAX_IMPORT_BYTES = 400 * 1024 * 1024;

/** A column by its header name or by its 1-based position ("2"). */
const ColumnRef = Text({ min: 1, max: 120 });

/** The form fields of `POST /api/captures/import` (multipart: these fields first, then `file`). */
export const CaptureImportFields = z.object({
  dutId: z.coerce.number().int().positive(),
  checkpointId: z.coerce.number().int().positive(),
  gateTime: z.coerce
    .number()
    .finite()
    .min(0.001, 'must be at least 1 ms')
    .max(1000, 'must be at most 1000 s'),
  deadTime: z.coerce.number().finite().min(0).max(1000).optional(),
  timeColumn: ColumnRef.default('1'),
  valueColumn: ColumnRef.default('2'),
  timeFormat: z.enum(TIME_FORMATS).default('seconds'),
  /** Unit of values written without one (cells such as `16.000012 MHz` carry their own). Default: the DUT's unit. */
  unit: Text({ min: 1, max: 20 }).optional(),
  decimalSeparator: z.enum(['.', ',']).default('.'),
  delimiter: z
    .string()
    .transform((d) => (d === 'tab' || d === '\\t' ? '\t' : d))
    .pipe(z.enum(DELIMITERS))
    .default('auto'),
  /** Lines to skip before anything is read (a header block the automatic rules do not recognise). */
  skipLines: z.coerce.number().int().min(0).max(10_000).default(0),
  referenceId: z.coerce.number().int().positive().optional(),
  instrumentId: z.coerce.number().int().positive().optional(),
  ambientC: z.coerce.number().finite().min(-60).max(150).optional(),
  notes: Text({ max: 5000, trim: false }).optional(),
  /** A key the client chose, to follow the server's progress at `GET /api/captures/import/progress/:key`. */
  progressKey: z
    .string()
    .regex(/^[A-Za-z0-9_-]{8,64}$/, 'letters, digits, - and _, 8 to 64 characters')
    .optional(),
});
export type CaptureImportFields = z.infer<typeof CaptureImportFields>;

/** Answer of a successful import. */
export const CaptureImportResult = z.object({
  id: z.number().int().positive(),
  readings: z.number().int(),
});
export type CaptureImportResult = z.infer<typeof CaptureImportResult>;

/** 'unknown': no import under this key for this user (not started yet, or long over). */
export const IMPORT_PHASES = [
  'unknown',
  'receiving',
  'storing',
  'finishing',
  'done',
  'failed',
] as const;
export type ImportPhase = (typeof IMPORT_PHASES)[number];
export const ImportProgress = z.object({
  phase: z.enum(IMPORT_PHASES),
  /** Rows read so far (all of them once storing starts). */
  rows: z.number().int(),
  /** Readings stored so far. */
  stored: z.number().int(),
});
export type ImportProgress = z.infer<typeof ImportProgress>;

/** What a bad line is reported as (the 400's details). */
export interface ImportLineProblem {
  line: number;
  column: string;
  reason: string;
}

export class ImportLineError extends Error {
  readonly problem: ImportLineProblem;
  constructor(problem: ImportLineProblem) {
    super(`line ${problem.line}, column ${problem.column}: ${problem.reason}`);
    this.name = 'ImportLineError';
    this.problem = problem;
  }
}

/** The quantity a DUT's unit measures (Hz → frequency, mg → acceleration …); counts when unknown. */
export function quantityOfUnit(unit: string): Exclude<Quantity, 'time'> {
  const q = resolveUnit(unit)?.quantity;
  return q && q !== 'time' ? q : 'counts';
}

const BARE_NUMBER = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;
const LOOKS_NUMERIC = /^\s*[+-]?(?:\d|\.\d)/;
const COMMENT = /^\s*(?:#|;|\/\/|%|!)/;
const KEY_VALUE = /^\s*[A-Za-z][^:=]{0,60}[:=]/;
const ISO =
  /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2}):(\d{2})(?:[.,](\d{1,12}))?\s*(Z|[+-]\d{2}:?\d{2})?$/;
const HMS = /^(\d{1,2}):(\d{2}):(\d{2})(?:[.,](\d{1,12}))?$/;

export interface ImportReaderOptions {
  timeColumn: string;
  valueColumn: string;
  timeFormat: TimeFormat;
  /** Unit of bare values; the DUT's unit when absent. */
  unit?: string;
  decimalSeparator: '.' | ',';
  skipLines: number;
  /** Seconds between readings (gate + dead time), for timeFormat 'none'. */
  tau0: number;
  /** The DUT's unit: values are stored in it. */
  dutUnit: string;
  maxRows?: number;
}

/**
 * Reads rows one at a time (`push`), keeping times (seconds from the first reading) and values
 * (in the DUT's unit) in growing typed arrays. Throws ImportLineError for the first bad line.
 */
export class ImportReader {
  private readonly quantity: Quantity;
  private readonly toDut: number;
  private readonly bareFactor: number;
  private inData = false;
  private names: string[] | null = null;
  private timeIdx = -1;
  private valueIdx = -1;
  private tBuf = new Float64Array(1024);
  private vBuf = new Float64Array(1024);
  private n = 0;
  private firstWhole = 0;
  private firstFrac = 0;
  private prevDay = 0;
  private dayOffset = 0;
  /** Absolute time of the first reading (ISO 8601 files), ms since 1970 UTC. */
  startEpochMs: number | null = null;
  /** Lines read as the header block (metadata), in order. */
  readonly metadata: string[] = [];

  constructor(private readonly o: ImportReaderOptions) {
    this.quantity = quantityOfUnit(o.dutUnit);
    const dutFactor = unitFactor(o.dutUnit);
    if (dutFactor === null || dutFactor === 0)
      throw new ImportLineError({
        line: 0,
        column: 'unit',
        reason: `the DUT's unit "${o.dutUnit}" is not one Driftbench converts`,
      });
    this.toDut = 1 / dutFactor;
    const unit = o.unit ?? o.dutUnit;
    const r = unit === '' ? null : resolveUnit(unit);
    if (unit !== '' && (!r || (this.quantity !== 'counts' && r.quantity !== this.quantity))) {
      throw new ImportLineError({
        line: 0,
        column: 'unit',
        reason: `"${unit}" is not a unit of ${this.quantity}`,
      });
    }
    this.bareFactor = r?.factor ?? 1;
  }

  /** Readings read so far. */
  get count(): number {
    return this.n;
  }
  /** Column names from the column-name row, when the file has one. */
  get columns(): string[] | null {
    return this.names;
  }
  get times(): Float64Array {
    return this.tBuf.subarray(0, this.n);
  }
  get values(): Float64Array {
    return this.vBuf.subarray(0, this.n);
  }

  /** Reads one row (`line` is its 1-based line number in the file). */
  push(fields: string[], line: number): void {
    if (line <= this.o.skipLines) return;
    const blank = fields.every((f) => f.trim() === '');
    if (blank || COMMENT.test(fields[0] ?? '')) {
      if (!this.inData && !blank) this.metadata.push(fields.join(' ').trim());
      return;
    }
    if (!this.inData) {
      const needed = this.o.timeFormat === 'none' ? 1 : 2;
      if (fields.length < needed || KEY_VALUE.test(fields[0])) {
        this.metadata.push(fields.join(' ').trim());
        return;
      }
      if (!fields.some((f) => LOOKS_NUMERIC.test(f))) {
        this.names = fields.map((f) => f.trim());
        return;
      }
      this.resolveColumns(line);
      this.inData = true;
    }
    this.readRow(fields, line);
  }

  /** Checks the end of the file: at least two readings. */
  finish(lastLine: number): void {
    if (this.n < 2) {
      throw new ImportLineError({
        line: lastLine,
        column: this.o.valueColumn,
        reason:
          this.n === 0
            ? 'the file holds no readings'
            : 'the file holds a single reading; a capture needs at least two',
      });
    }
  }

  private resolveColumns(line: number): void {
    const find = (ref: string, role: string): number => {
      if (/^\d+$/.test(ref)) {
        const i = Number(ref) - 1;
        if (i < 0)
          throw new ImportLineError({
            line,
            column: ref,
            reason: `${role} column positions count from 1`,
          });
        return i;
      }
      const i = this.names
        ? this.names.findIndex((n) => n.toLowerCase() === ref.toLowerCase())
        : -1;
      if (i < 0) {
        const known = this.names
          ? `the columns are ${this.names.map((n) => `"${n}"`).join(', ')}`
          : 'the file has no column-name row';
        throw new ImportLineError({
          line,
          column: ref,
          reason: `no ${role} column named "${ref}": ${known}`,
        });
      }
      return i;
    };
    this.valueIdx = find(this.o.valueColumn, 'value');
    if (this.o.timeFormat !== 'none') this.timeIdx = find(this.o.timeColumn, 'time');
  }

  private columnName(i: number): string {
    return this.names?.[i] ? `${i + 1} (${this.names[i]})` : String(i + 1);
  }

  /** The cell as a plain number string: digit-group spaces removed, the decimal comma made a point. */
  private normalise(text: string, i: number, line: number): string {
    let s = text.trim().replace(/(\d)[\s\u00a0\u202f](?=\d)/g, '$1');
    if (this.o.decimalSeparator === ',') {
      if (/\d\.\d/.test(s)) {
        throw new ImportLineError({
          line,
          column: this.columnName(i),
          reason: `"${clip(text)}" uses "." but the decimal separator is ","`,
        });
      }
      s = s.replace(',', '.');
    }
    return s;
  }

  private cell(fields: string[], i: number, line: number, role: string): string {
    const v = fields[i];
    if (v === undefined || v.trim() === '') {
      throw new ImportLineError({
        line,
        column: this.columnName(i),
        reason: `the ${role} is missing (the line has ${fields.length} field${fields.length === 1 ? '' : 's'})`,
      });
    }
    return v;
  }

  private readRow(fields: string[], line: number): void {
    if (this.n >= (this.o.maxRows ?? MAX_IMPORT_ROWS)) {
      throw new ImportLineError({
        line,
        column: this.columnName(this.valueIdx),
        reason: `a file holds at most ${this.o.maxRows ?? MAX_IMPORT_ROWS} readings`,
      });
    }
    const raw = this.cell(fields, this.valueIdx, line, 'value');
    const text = this.normalise(raw, this.valueIdx, line);
    const parsed = parseMeasurement(text, {
      quantity: this.quantity === 'counts' ? undefined : this.quantity,
    });
    if (!parsed.ok)
      throw new ImportLineError({
        line,
        column: this.columnName(this.valueIdx),
        reason: parsed.message,
      });
    const base = BARE_NUMBER.test(text) ? parsed.value * this.bareFactor : parsed.value;
    const value = base * this.toDut;
    if (!Number.isFinite(value))
      throw new ImportLineError({
        line,
        column: this.columnName(this.valueIdx),
        reason: 'value out of range',
      });
    const t = this.o.timeFormat === 'none' ? this.n * this.o.tau0 : this.time(fields, line);
    if (this.n > 0 && t < this.tBuf[this.n - 1]) {
      throw new ImportLineError({
        line,
        column: this.columnName(this.timeIdx),
        reason: `time runs backwards: ${fmt(t)} s after ${fmt(this.tBuf[this.n - 1])} s`,
      });
    }
    if (this.n === this.tBuf.length) {
      const grow = (a: Float64Array) => {
        const b = new Float64Array(a.length * 2);
        b.set(a);
        return b;
      };
      this.tBuf = grow(this.tBuf);
      this.vBuf = grow(this.vBuf);
    }
    this.tBuf[this.n] = t;
    this.vBuf[this.n] = value;
    this.n++;
  }

  /** Seconds since the first reading; whole and fractional seconds apart, so ISO times keep µs. */
  private time(fields: string[], line: number): number {
    const raw = this.cell(fields, this.timeIdx, line, 'time');
    const bad = (why: string) =>
      new ImportLineError({ line, column: this.columnName(this.timeIdx), reason: why });
    let whole: number;
    let frac: number;
    if (this.o.timeFormat === 'seconds') {
      const text = this.normalise(raw, this.timeIdx, line);
      const p = parseMeasurement(text, { quantity: 'time' });
      if (!p.ok) throw bad(`not a time in seconds: ${p.message}`);
      return p.value;
    } else if (this.o.timeFormat === 'iso8601') {
      const m = ISO.exec(raw.trim());
      if (!m)
        throw bad(`"${clip(raw)}" is not an ISO 8601 date and time (2026-11-02T09:15:00.250Z)`);
      const [, y, mo, d, h, mi, s, f, zone] = m;
      let ms = Date.UTC(+y, +mo - 1, +d, +h, +mi, +s);
      const check = new Date(ms);
      if (
        check.getUTCMonth() !== +mo - 1 ||
        check.getUTCDate() !== +d ||
        +h > 23 ||
        +mi > 59 ||
        +s > 60
      )
        throw bad(`"${clip(raw)}" is not a valid date and time`);
      if (zone && zone !== 'Z') {
        const zm = /^([+-])(\d{2}):?(\d{2})$/.exec(zone)!;
        ms -= (zm[1] === '-' ? -1 : 1) * (+zm[2] * 60 + +zm[3]) * 60_000;
      }
      whole = ms / 1000;
      frac = f ? Number(`0.${f}`) : 0;
      if (this.n === 0) this.startEpochMs = ms + frac * 1000;
    } else {
      const m = HMS.exec(raw.trim());
      if (!m || +m[1] > 23 || +m[2] > 59 || +m[3] > 60)
        throw bad(`"${clip(raw)}" is not a time of day HH:MM:SS.fff`);
      let day = +m[1] * 3600 + +m[2] * 60 + +m[3];
      // Past midnight the clock starts again: a drop of more than 12 h is the next day.
      if (this.n > 0 && day + this.dayOffset < this.prevDay - 43_200) this.dayOffset += 86_400;
      day += this.dayOffset;
      this.prevDay = day;
      whole = day;
      frac = m[4] ? Number(`0.${m[4]}`) : 0;
    }
    if (this.n === 0) {
      this.firstWhole = whole;
      this.firstFrac = frac;
    }
    return whole - this.firstWhole + (frac - this.firstFrac);
  }
}

/**
 * Guesses a file's delimiter from its first lines: the candidate that splits the last (data)
 * lines of the sample into the same number of fields, two or more, the most often. A decimal
 * comma rules the comma out. Comma when nothing fits.
 */
export function guessDelimiter(
  sample: string,
  decimalSeparator: '.' | ',' = '.',
): ',' | ';' | '\t' | '|' {
  const lines = sample.split(/\r?\n/);
  if (lines.length > 1) lines.pop(); // the last line of a sample may be cut short
  const data = lines.filter((l) => l.trim() !== '' && !COMMENT.test(l)).slice(-30);
  const candidates = (decimalSeparator === ',' ? [';', '\t', '|'] : [',', '\t', ';', '|']) as Array<
    ',' | ';' | '\t' | '|'
  >;
  let best: ',' | ';' | '\t' | '|' = decimalSeparator === ',' ? ';' : ',';
  let bestScore = 0;
  for (const d of candidates) {
    const counts = data.map((l) => l.split(d).length);
    const last = counts[counts.length - 1] ?? 1;
    if (last < 2) continue;
    const score = counts.filter((c) => c === last).length;
    if (score > bestScore) {
      best = d;
      bestScore = score;
    }
  }
  return best;
}

function clip(s: string): string {
  return s.length > 40 ? `${s.slice(0, 40)}…` : s;
}
function fmt(x: number): string {
  return Number(x.toPrecision(10)).toString();
}
