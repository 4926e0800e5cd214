/**
 * The closing table of `npm run bench`: every bench that measures a figure with a target calls
 * {@link recordFigure} beside its own printed line, and tests/bench/run.ts prints what was
 * collected with {@link printSummary} once all chosen benches ran. Figures without a target
 * (anchors, trends) may be recorded with `target` '—' and `met` null.
 */
export interface Figure {
  /** What was measured, e.g. "one stream, binary / COPY". */
  figure: string;
  /** The measured value with its unit, e.g. "0.62" or "38.1 ms". */
  measured: string;
  /** The target with its comparison, e.g. "≥ 0.50". */
  target: string;
  /** Whether the target was met; null when the figure has no target or was skipped. */
  met: boolean | null;
  /** Which bench recorded it (filled in from the bench running at the time). */
  bench?: string;
}

const figures: Figure[] = [];
let current = '';

/** Called by run.ts before each bench, so the table can say where a figure came from. */
export function benchStarted(name: string): void {
  current = name;
}

/** Adds one line to the closing table. */
export function recordFigure(f: Figure): void {
  figures.push({ ...f, bench: f.bench ?? current });
}

/** What was recorded so far (for tests of the table itself and for the printer). */
export function recordedFigures(): readonly Figure[] {
  return figures;
}

/** The table as text lines: figure | measured | target | met, columns padded to their widest cell. */
export function summaryLines(rows: readonly Figure[] = figures): string[] {
  const cells = rows.map((r) => [
    r.figure,
    r.measured,
    r.target,
    r.met === null ? '—' : r.met ? 'met' : 'NOT met',
    r.bench ?? '',
  ]);
  const head = ['figure', 'measured', 'target', 'met', 'bench'];
  const widths = head.map((h, i) => Math.max(h.length, ...cells.map((c) => c[i].length)));
  const line = (c: string[]) => c.map((x, i) => x.padEnd(widths[i])).join(' | ');
  return [line(head), widths.map((w) => '-'.repeat(w)).join('-|-'), ...cells.map(line)];
}

/** Prints the closing table (nothing when no bench recorded a figure). */
export function printSummary(): void {
  if (figures.length === 0) return;
  const missed = figures.filter((f) => f.met === false).length;
  const met = figures.filter((f) => f.met === true).length;
  console.log(`\nSummary — ${met} targets met, ${missed} not met`);
  for (const l of summaryLines()) console.log(`  ${l}`);
}
