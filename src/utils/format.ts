/** Small, locale-stable formatters for figures shown in the client. */

const DAY_MS = 86_400_000;

export type CalibrationState = 'ok' | 'due-soon' | 'overdue' | 'unknown';

/** Days a calibration may come due before the lab is warned. */
export const CALIBRATION_WARNING_DAYS = 30;

function startOfDay(date: Date): number {
  return Date.UTC(date.getFullYear(), date.getMonth(), date.getDate());
}

function dateOnly(value: string): number | null {
  const match = /^(\d{4})-(\d{2})-(\d{2})/.exec(value);
  if (match) return Date.UTC(Number(match[1]), Number(match[2]) - 1, Number(match[3]));
  const parsed = new Date(value);
  return Number.isNaN(parsed.getTime()) ? null : startOfDay(parsed);
}

/** Whole days from today until `due` (negative when past). */
export function daysUntil(due: string | null, now: Date = new Date()): number | null {
  if (!due) return null;
  const day = dateOnly(due);
  return day === null ? null : Math.round((day - startOfDay(now)) / DAY_MS);
}

export function calibrationState(due: string | null, now: Date = new Date()): CalibrationState {
  const days = daysUntil(due, now);
  if (days === null) return 'unknown';
  if (days < 0) return 'overdue';
  return days <= CALIBRATION_WARNING_DAYS ? 'due-soon' : 'ok';
}

export function calibrationLabel(due: string | null, now: Date = new Date()): string {
  const days = daysUntil(due, now);
  if (days === null) return 'No due date';
  if (days < 0) return `Overdue by ${-days} ${-days === 1 ? 'day' : 'days'}`;
  if (days === 0) return 'Due today';
  return `Due in ${days} ${days === 1 ? 'day' : 'days'}`;
}

const MONTHS = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'];

/** 2025-03-07 → "7 Mar 2025" (unambiguous in every locale). */
export function formatDate(value: string | null | undefined): string {
  if (!value) return '—';
  const day = dateOnly(value);
  if (day === null) return '—';
  const d = new Date(day);
  return `${d.getUTCDate()} ${MONTHS[d.getUTCMonth()]} ${d.getUTCFullYear()}`;
}

export function formatDateTime(value: string | null | undefined): string {
  if (!value) return '—';
  const d = new Date(value);
  if (Number.isNaN(d.getTime())) return '—';
  const hh = String(d.getHours()).padStart(2, '0');
  const mm = String(d.getMinutes()).padStart(2, '0');
  return `${d.getDate()} ${MONTHS[d.getMonth()]} ${d.getFullYear()}, ${hh}:${mm}`;
}

/** Thin-space digit grouping, as docs/design.md asks: 16000000.0123 → "16 000 000.0123". */
export function groupDigits(value: number, fractionDigits?: number): string {
  if (!Number.isFinite(value)) return '—';
  const text = fractionDigits === undefined ? String(value) : value.toFixed(fractionDigits);
  const [whole, fraction] = text.split('.');
  const sign = whole.startsWith('-') ? '−' : '';
  const digits = whole.replace('-', '');
  const grouped = digits.replace(/\B(?=(\d{3})+(?!\d))/g, '\u2009');
  return fraction ? `${sign}${grouped}.${fraction}` : `${sign}${grouped}`;
}

/** A small dimensionless number in scientific form with sign: 1.2e-11 → "+1.2 × 10⁻¹¹". */
export function formatScientific(value: number | null | undefined, digits = 2): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return '—';
  if (value === 0) return '0';
  const exponent = Math.floor(Math.log10(Math.abs(value)));
  const mantissa = value / 10 ** exponent;
  const superscript = String(exponent)
    .replace('-', '⁻')
    .replace(/\d/g, (d) => '⁰¹²³⁴⁵⁶⁷⁸⁹'[Number(d)]);
  const sign = value > 0 ? '+' : '−';
  return `${sign}${Math.abs(mantissa).toFixed(digits - 1)} × 10${superscript}`;
}

export function formatCount(value: number | null | undefined): string {
  return typeof value === 'number' ? groupDigits(value) : '—';
}
