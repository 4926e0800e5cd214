/**
 * SI-prefix, ppm/ppb and log-axis helpers for the capture page and stability plots.
 * Minus signs are U+2212 and every signed figure carries its sign, as docs/design.md asks.
 */

const MINUS = '\u2212';
const PREFIXES: Array<[number, string]> = [
  [1e9, 'G'],
  [1e6, 'M'],
  [1e3, 'k'],
  [1, ''],
  [1e-3, 'm'],
  [1e-6, 'µ'],
  [1e-9, 'n'],
  [1e-12, 'p'],
];

/** Units that are never given an SI prefix: already prefixed, relative, or counts. */
const UNPREFIXED = new Set([
  'mg',
  'mV',
  'µV',
  'mA',
  'ms',
  'µs',
  'ns',
  '%',
  'ppm',
  'ppb',
  '°C',
  'count',
  'counts',
]);

/** Trims trailing zeros of a fixed-point text: "1.500" → "1.5", "2.000" → "2". */
function trimZeros(text: string): string {
  return text.includes('.') ? text.replace(/\.?0+$/, '') : text;
}

/** Replaces an ASCII hyphen-minus at the front by a true minus sign. */
function minus(text: string): string {
  return text.startsWith('-') ? MINUS + text.slice(1) : text;
}

/**
 * A value with an SI prefix and up to `digits` significant figures, trailing zeros dropped:
 * (0.001, 's') → "1 ms", (2500, 's') → "2.5 ks", (16e6, 'Hz') → "16 MHz".
 */
export function formatSi(value: number | null | undefined, unit: string, digits = 3): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  if (value === 0) return `0 ${unit}`;
  const abs = Math.abs(value);
  // A unit that already carries a prefix (mg, mV) or takes none (%, ppm) keeps its own scale: no "mmg".
  const [factor, prefix] = UNPREFIXED.has(unit)
    ? PREFIXES[3]
    : (PREFIXES.find(([f]) => abs >= f * 0.9995) ?? PREFIXES[PREFIXES.length - 1]);
  const scaled = value / factor;
  const decimals = Math.max(0, digits - 1 - Math.floor(Math.log10(Math.abs(scaled))));
  return `${minus(trimZeros(scaled.toFixed(decimals)))} ${prefix}${unit}`;
}

/** τ in seconds for an axis or a table: 1 → "1 s", 0.01 → "10 ms", 2000 → "2 ks". */
export function formatTau(seconds: number): string {
  return formatSi(seconds, 's', 3);
}

/** A number with an explicit sign: 0.5 → "+0.500", −2 → "−2.000"; zero carries no sign. */
export function formatSigned(value: number | null | undefined, fractionDigits = 3): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  const text = Math.abs(value).toFixed(fractionDigits);
  if (Number(text) === 0) return text;
  return (value > 0 ? '+' : MINUS) + text;
}

/** A fractional value (e.g. 1.2e-6) in ppm with sign: "+1.200 ppm". */
export function formatPpm(fraction: number | null | undefined, fractionDigits = 3): string {
  if (fraction === null || fraction === undefined || !Number.isFinite(fraction)) return '—';
  return `${formatSigned(fraction * 1e6, fractionDigits)} ppm`;
}

/** A fractional value in ppb with sign: 3.4e-9 → "+3.40 ppb". */
export function formatPpb(fraction: number | null | undefined, fractionDigits = 2): string {
  if (fraction === null || fraction === undefined || !Number.isFinite(fraction)) return '—';
  return `${formatSigned(fraction * 1e9, fractionDigits)} ppb`;
}

/**
 * A fractional value in ppm, or in ppb when it is below 0.1 ppm in magnitude, with three
 * significant figures and sign (`signed` false drops the sign, e.g. for an uncertainty).
 */
export function formatRelative(fraction: number | null | undefined, signed = true): string {
  if (fraction === null || fraction === undefined || !Number.isFinite(fraction)) return '—';
  const usePpb = Math.abs(fraction) < 1e-7;
  const scaled = fraction * (usePpb ? 1e9 : 1e6);
  const abs = Math.abs(scaled);
  const decimals = abs === 0 ? 2 : Math.min(6, Math.max(0, 2 - Math.floor(Math.log10(abs))));
  const unit = usePpb ? 'ppb' : 'ppm';
  if (!signed) return `${abs.toFixed(decimals)} ${unit}`;
  return `${formatSigned(scaled, decimals)} ${unit}`;
}

const SUPERSCRIPT = '⁰¹²³⁴⁵⁶⁷⁸⁹';

/** Unsigned scientific form for deviations and uncertainties: 1.23e-11 → "1.23 × 10⁻¹¹". */
export function formatSci(value: number | null | undefined, digits = 3): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  if (value === 0) return '0';
  let exponent = Math.floor(Math.log10(Math.abs(value)));
  let mantissa = (Math.abs(value) / 10 ** exponent).toFixed(digits - 1);
  if (Number(mantissa) >= 10) {
    exponent += 1;
    mantissa = (Math.abs(value) / 10 ** exponent).toFixed(digits - 1);
  }
  const sign = value < 0 ? MINUS : '';
  if (exponent === 0) return `${sign}${mantissa}`;
  const sup = String(exponent)
    .replace('-', '⁻')
    .replace(/\d/g, (d) => SUPERSCRIPT[Number(d)]);
  return `${sign}${mantissa} × 10${sup}`;
}

/** One tick of a logarithmic axis: every 1…9 × 10^k, labelled at 1, 2 and 5, gridded at decades. */
export interface LogTick {
  value: number;
  /** 1 × 10^k. */
  decade: boolean;
  /** 1, 2 or 5 × 10^k: these carry a label. */
  labelled: boolean;
}

/**
 * Ticks of a base-10 log axis between `min` and `max` (both > 0): one at every integer multiple
 * 1…9 of each decade inside the range; decades are gridded, 1-2-5 multiples labelled.
 */
export function logTicks(min: number, max: number): LogTick[] {
  if (!(min > 0) || !(max > 0) || !Number.isFinite(min) || !Number.isFinite(max)) return [];
  const lo = Math.min(min, max);
  const hi = Math.max(min, max);
  const ticks: LogTick[] = [];
  const first = Math.floor(Math.log10(lo) + 1e-9);
  const last = Math.ceil(Math.log10(hi) - 1e-9);
  for (let k = first; k <= last; k++) {
    for (let m = 1; m <= 9; m++) {
      // Built from the mantissa and a power of ten so 2 × 10⁻³ prints as 0.002, not 0.0020000000000000005.
      const value = Number(`${m}e${k}`);
      if (value < lo * (1 - 1e-9) || value > hi * (1 + 1e-9)) continue;
      ticks.push({ value, decade: m === 1, labelled: m === 1 || m === 2 || m === 5 });
    }
  }
  return ticks;
}

/** The decades [10^a, 10^b] that enclose `min`…`max`, for a log scale's range. */
export function decadeRange(min: number, max: number): [number, number] {
  if (!(min > 0) || !(max > 0)) return [1e-12, 1e-9];
  const a = Math.floor(Math.log10(Math.min(min, max)) + 1e-9);
  const b = Math.max(a + 1, Math.ceil(Math.log10(Math.max(min, max)) - 1e-9));
  return [Number(`1e${a}`), Number(`1e${b}`)];
}
