// Exact EDF of a stability variance for noise white in phase (x) or in frequency (y), computed
// independently of shared/analysis: an estimator V ∝ Σ_j s_j², s_j = Σ_k c_k·w_{j·stride + k} on
// independent unit-variance w, has E V ∝ M·R(0) and Var V ∝ 2·Σ_{i,j} R((i − j)·stride)², with R the
// autocorrelation of the coefficient vector c; so EDF = 2(E V)²/Var V = M²R(0)²/Σ_{|j|<M}(M − |j|)R(j·stride)².
// (Standard result for quadratic forms in Gaussian variables; the method the EDF issue prescribes.)

export type ExactKind = 'adev' | 'oadev' | 'mdev' | 'hdev' | 'ohdev';

/** Coefficients of one estimator term over consecutive phase samples (NIST SP 1065 eqs 6–20). */
export function phaseCoefficients(kind: ExactKind, m: number): Float64Array {
  switch (kind) {
    case 'adev':
    case 'oadev': {
      const c = new Float64Array(2 * m + 1);
      c[0] = 1;
      c[m] = -2;
      c[2 * m] = 1;
      return c;
    }
    case 'hdev':
    case 'ohdev': {
      const c = new Float64Array(3 * m + 1);
      c[0] = -1;
      c[m] = 3;
      c[2 * m] = -3;
      c[3 * m] = 1;
      return c;
    }
    case 'mdev': {
      // Σ_{i=0}^{m−1} (x_{i+2m} − 2x_{i+m} + x_i)
      const c = new Float64Array(3 * m);
      for (let i = 0; i < m; i++) {
        c[i] += 1;
        c[i + m] -= 2;
        c[i + 2 * m] += 1;
      }
      return c;
    }
  }
}

/** The same term over the frequency readings y when x_k = Σ_{i<k} y_i: c'_i = Σ_{k>i} c_k. */
export function frequencyCoefficients(c: Float64Array): Float64Array {
  const out = new Float64Array(c.length - 1);
  let tail = 0;
  for (let i = c.length - 2; i >= 0; i--) {
    tail += c[i + 1];
    out[i] = tail;
  }
  return out;
}

function autocorrelation(c: Float64Array, lag: number): number {
  let s = 0;
  for (let a = 0; a + lag < c.length; a++) s += c[a] * c[a + lag];
  return s;
}

/** Exact EDF of M terms of coefficient vector c taken every `stride` samples of white input. */
export function exactEdfStationary(c: Float64Array, M: number, stride: number): number {
  const r0 = autocorrelation(c, 0);
  let denom = M * r0 * r0;
  for (let j = 1; j < M && j * stride < c.length; j++) {
    denom += 2 * (M - j) * autocorrelation(c, j * stride) ** 2;
  }
  return (M * M * r0 * r0) / denom;
}

/** Number of terms of each kind on N phase points at averaging factor m (SP 1065 sum limits). */
export function termCount(kind: ExactKind, N: number, m: number): number {
  switch (kind) {
    case 'oadev':
      return N - 2 * m;
    case 'adev':
      return Math.floor((N - 1) / m) - 1;
    case 'mdev':
      return N - 3 * m + 1;
    case 'ohdev':
      return N - 3 * m;
    case 'hdev':
      return Math.floor((N - 1) / m) - 2;
  }
}

/** Exact EDF of `kind` at m on N phase points for white PM ('x') or white FM ('y'). */
export function exactEdf(kind: ExactKind, N: number, m: number, white: 'x' | 'y'): number {
  const cx = phaseCoefficients(kind, m);
  const c = white === 'x' ? cx : frequencyCoefficients(cx);
  const stride = kind === 'adev' || kind === 'hdev' ? m : 1;
  return exactEdfStationary(c, termCount(kind, N, m), stride);
}

/**
 * Exact EDF of TOTVAR (SP 1065 eq 25: reflected phase extension) at m on N phase points, by the
 * general quadratic form: terms as rows of A over the white inputs, C = A·Aᵀ, EDF = tr(C)²/ΣC_ij².
 * O(N³): for small N only.
 */
export function exactTotdevEdf(N: number, m: number, white: 'x' | 'y'): number {
  // x*(i) for 1-based i in 2−N … 2N−1 as a vector over x(1..N)
  const star = (i: number): Float64Array => {
    const v = new Float64Array(N);
    if (i >= 1 && i <= N) v[i - 1] = 1;
    else if (i < 1) {
      const j = 1 - i;
      v[0] += 2;
      v[j] -= 1; // x(1 + j)
    } else {
      const j = i - N;
      v[N - 1] += 2;
      v[N - 1 - j] -= 1; // x(N − j)
    }
    return v;
  };
  const rows: Float64Array[] = [];
  for (let i = 2; i <= N - 1; i++) {
    const a = star(i - m);
    const b = star(i);
    const c = star(i + m);
    const r = new Float64Array(N);
    for (let k = 0; k < N; k++) r[k] = a[k] - 2 * b[k] + c[k];
    rows.push(white === 'x' ? r : frequencyCoefficients(r));
  }
  const T = rows.length;
  let trace = 0;
  let sumSq = 0;
  for (let p = 0; p < T; p++) {
    for (let q = p; q < T; q++) {
      let s = 0;
      const rp = rows[p];
      const rq = rows[q];
      for (let k = 0; k < rp.length; k++) s += rp[k] * rq[k];
      if (p === q) {
        trace += s;
        sumSq += s * s;
      } else sumSq += 2 * s * s;
    }
  }
  return (trace * trace) / sumSq;
}
