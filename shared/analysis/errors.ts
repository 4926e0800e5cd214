/** Why an analysis input was refused. */
export type AnalysisErrorCode =
  'empty' | 'too-short' | 'non-finite' | 'mismatched' | 'bad-argument';

/** The one error type thrown by shared/analysis for inputs outside a function's domain. */
export class AnalysisError extends Error {
  readonly code: AnalysisErrorCode;

  constructor(code: AnalysisErrorCode, message: string) {
    super(message);
    this.name = 'AnalysisError';
    this.code = code;
  }
}

/** Throws unless `values` has at least `min` finite entries (Driftbench convention, no source). */
export function assertSeries(values: ArrayLike<number>, name: string, min = 1): void {
  if (values == null || typeof values.length !== 'number') {
    throw new AnalysisError('bad-argument', `${name} must be an array of numbers`);
  }
  if (values.length === 0) throw new AnalysisError('empty', `${name} is empty`);
  if (values.length < min) {
    throw new AnalysisError(
      'too-short',
      `${name} needs at least ${min} values, got ${values.length}`,
    );
  }
  for (let i = 0; i < values.length; i++) {
    if (!Number.isFinite(values[i])) {
      throw new AnalysisError('non-finite', `${name}[${i}] is not a finite number`);
    }
  }
}

/** Throws unless two series have the same length (Driftbench convention, no source). */
export function assertSameLength(a: ArrayLike<number>, b: ArrayLike<number>, names: string): void {
  if (a.length !== b.length) {
    throw new AnalysisError('mismatched', `${names} differ in length (${a.length} vs ${b.length})`);
  }
}

/** Throws unless `value` is a finite number, and strictly positive when `positive` is set. */
export function assertNumber(
  value: unknown,
  name: string,
  positive = false,
): asserts value is number {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new AnalysisError('bad-argument', `${name} must be a finite number`);
  }
  if (positive && !(value > 0)) {
    throw new AnalysisError('bad-argument', `${name} must be greater than zero`);
  }
}
