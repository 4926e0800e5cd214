import { AnalysisError, assertNumber, assertSeries } from './errors';

/**
 * Fractional frequency y = (f − f0)/f0 (IEEE Std 1139-2008; NIST SP 1065 §2).
 * Domain: f finite, f0 finite and non-zero. Arrays give a Float64Array.
 */
export function fractionalFrequency(f: number, f0: number): number;
export function fractionalFrequency(f: ArrayLike<number>, f0: number): Float64Array;
export function fractionalFrequency(
  f: number | ArrayLike<number>,
  f0: number,
): number | Float64Array {
  assertNumber(f0, 'f0');
  if (f0 === 0) throw new AnalysisError('bad-argument', 'f0 must not be zero');
  if (typeof f === 'number') {
    assertNumber(f, 'f');
    return (f - f0) / f0;
  }
  assertSeries(f, 'f');
  const out = new Float64Array(f.length);
  for (let i = 0; i < f.length; i++) out[i] = (f[i] - f0) / f0;
  return out;
}

/**
 * Reference correction f_true = f_displayed·(1 + y_ref) (Driftbench's documented first-order
 * convention, docs/references.md "Frequency counters"). y_ref is the timebase's fractional offset.
 */
export function referenceCorrect(fDisplayed: number, yRef: number): number;
export function referenceCorrect(fDisplayed: ArrayLike<number>, yRef: number): Float64Array;
export function referenceCorrect(
  fDisplayed: number | ArrayLike<number>,
  yRef: number,
): number | Float64Array {
  assertNumber(yRef, 'yRef');
  const k = 1 + yRef;
  if (typeof fDisplayed === 'number') {
    assertNumber(fDisplayed, 'fDisplayed');
    return fDisplayed * k;
  }
  assertSeries(fDisplayed, 'fDisplayed');
  const out = new Float64Array(fDisplayed.length);
  for (let i = 0; i < fDisplayed.length; i++) out[i] = fDisplayed[i] * k;
  return out;
}

/** Inverse of referenceCorrect: f_displayed = f_true/(1 + y_ref) (same convention). */
export function referenceUncorrect(fTrue: number, yRef: number): number;
export function referenceUncorrect(fTrue: ArrayLike<number>, yRef: number): Float64Array;
export function referenceUncorrect(
  fTrue: number | ArrayLike<number>,
  yRef: number,
): number | Float64Array {
  assertNumber(yRef, 'yRef');
  const k = 1 + yRef;
  if (k === 0) throw new AnalysisError('bad-argument', 'yRef must not be −1');
  if (typeof fTrue === 'number') {
    assertNumber(fTrue, 'fTrue');
    return fTrue / k;
  }
  assertSeries(fTrue, 'fTrue');
  const out = new Float64Array(fTrue.length);
  for (let i = 0; i < fTrue.length; i++) out[i] = fTrue[i] / k;
  return out;
}

/**
 * Frequency → phase: x0 = 0, x(k+1) = x(k) + y(k)·τ0, so N points give N+1 (NIST SP 1065 §2,
 * docs/references.md). Domain: at least one finite y, τ0 > 0.
 */
export function frequencyToPhase(y: ArrayLike<number>, tau0: number): Float64Array {
  assertSeries(y, 'y');
  assertNumber(tau0, 'tau0', true);
  const x = new Float64Array(y.length + 1);
  let acc = 0;
  for (let i = 0; i < y.length; i++) {
    acc += y[i] * tau0;
    x[i + 1] = acc;
  }
  return x;
}

/**
 * Phase → frequency: y(k) = (x(k+1) − x(k))/τ0 (NIST SP 1065 §2). Domain: at least two finite
 * phase points, τ0 > 0; N+1 phase points give N frequency points.
 */
export function phaseToFrequency(x: ArrayLike<number>, tau0: number): Float64Array {
  assertSeries(x, 'x', 2);
  assertNumber(tau0, 'tau0', true);
  const y = new Float64Array(x.length - 1);
  for (let i = 0; i < y.length; i++) y[i] = (x[i + 1] - x[i]) / tau0;
  return y;
}
