/**
 * Just enough SCPI program-message parsing for Driftbench's simulated counter: splitting a
 * line into commands, matching headers against patterns with short/long forms and optional
 * nodes (`[SENSe]:FREQuency:GATE:TIME` accepts `:SENS:FREQ:GATE:TIME`, `freq:gate:time`, …),
 * and numeric parameters with MIN/MAX/DEF and time suffixes.
 */

export interface ScpiCommand {
  /** Header as typed, without a leading colon or trailing `?`. */
  header: string;
  query: boolean;
  /** Parameter text after the header (trimmed), '' when none. */
  args: string;
}

/** Splits one program message into commands at `;` (outside quotes). */
export function splitCommands(line: string): ScpiCommand[] {
  const out: ScpiCommand[] = [];
  let cur = '';
  let quote: string | null = null;
  for (const ch of line) {
    if (quote) {
      if (ch === quote) quote = null;
      cur += ch;
    } else if (ch === '"' || ch === "'") {
      quote = ch;
      cur += ch;
    } else if (ch === ';') {
      pushCommand(out, cur);
      cur = '';
    } else cur += ch;
  }
  pushCommand(out, cur);
  return out;
}

function pushCommand(out: ScpiCommand[], text: string): void {
  const t = text.trim();
  if (t === '') return;
  const m = /^(\S+?)(\?)?(?:\s+(.*))?$/.exec(t);
  if (!m) return;
  let header = m[1];
  let query = m[2] === '?';
  if (header.endsWith('?')) {
    header = header.slice(0, -1);
    query = true;
  }
  out.push({ header: header.replace(/^:/, ''), query, args: (m[3] ?? '').trim() });
}

interface Node {
  short: string;
  long: string;
  optional: boolean;
}

function compile(pattern: string): Node[] {
  return pattern
    .replace(/^:/, '')
    .replace(/\[:/g, ':[')
    .split(':')
    .filter((s) => s !== '')
    .map((raw) => {
      const optional = raw.startsWith('[');
      const word = raw.replace(/[[\]]/g, '');
      const short = word.replace(/[a-z]/g, '');
      return { short: short.toUpperCase(), long: word.toUpperCase(), optional };
    });
}

const cache = new Map<string, Node[]>();

/** True when `header` (e.g. `SENS:FREQ:GATE:TIME`) matches `pattern` (long form, short part in capitals). */
export function headerMatches(header: string, pattern: string): boolean {
  if (pattern.startsWith('*')) return header.toUpperCase() === pattern.toUpperCase();
  let nodes = cache.get(pattern);
  if (!nodes) {
    nodes = compile(pattern);
    cache.set(pattern, nodes);
  }
  const tokens = header.toUpperCase().split(':');
  const match = (i: number, j: number): boolean => {
    if (j === nodes!.length) return i === tokens.length;
    const n = nodes![j];
    if (i < tokens.length && (tokens[i] === n.short || tokens[i] === n.long) && match(i + 1, j + 1))
      return true;
    return n.optional && match(i, j + 1);
  };
  return match(0, 0);
}

export type NumericArg =
  | { ok: true; value: number }
  | { ok: true; keyword: 'MIN' | 'MAX' | 'DEF' }
  | { ok: false; code: number; message: string };

/** Parses a numeric parameter in seconds: `0.1`, `1e-2`, `10 ms`, `100MS`, `MIN`, `MAX`, `DEF`. */
export function parseTimeArg(args: string): NumericArg {
  const a = args.trim();
  if (a === '') return { ok: false, code: -109, message: 'Missing parameter' };
  const kw = a.toUpperCase();
  if (kw === 'MIN' || kw === 'MINIMUM') return { ok: true, keyword: 'MIN' };
  if (kw === 'MAX' || kw === 'MAXIMUM') return { ok: true, keyword: 'MAX' };
  if (kw === 'DEF' || kw === 'DEFAULT') return { ok: true, keyword: 'DEF' };
  const m = /^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*([a-zA-Z]*)$/.exec(a);
  if (!m) return { ok: false, code: -104, message: 'Data type error' };
  // SCPI suffixes are case-insensitive, so MS means milliseconds (SCPI-1999 suffix rules; memory).
  const suffix = m[2].toUpperCase();
  const factor =
    suffix === '' || suffix === 'S' ? 1 : suffix === 'MS' ? 1e-3 : suffix === 'US' ? 1e-6 : NaN;
  if (Number.isNaN(factor)) return { ok: false, code: -131, message: 'Invalid suffix' };
  return { ok: true, value: Number(m[1]) * factor };
}

/** SCPI numeric response format as bench counters print it: `+1.600001234567E+07`. */
export function formatScpiNumber(value: number, decimals = 12): string {
  if (!Number.isFinite(value)) return '+9.91000000000E+37';
  const [mant, exp] = value.toExponential(decimals).split('e');
  const sign = mant.startsWith('-') ? '-' : '+';
  const e = Number(exp);
  const eSign = e < 0 ? '-' : '+';
  return `${sign}${mant.replace('-', '')}E${eSign}${String(Math.abs(e)).padStart(2, '0')}`;
}
