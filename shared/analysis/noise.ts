/** Power-law noise types by their frequency exponent α, S_y(f) ∝ f^α (NIST SP 1065 Table 3). */
export const NOISE_TYPES = ['wpm', 'fpm', 'wfm', 'ffm', 'rwfm'] as const;
export type NoiseType = (typeof NOISE_TYPES)[number];

/** α of each noise type, S_y(f) ∝ f^α (SP 1065 §4.1 / Table 3). */
export const NOISE_ALPHA: Readonly<Record<NoiseType, number>> = {
  wpm: 2,
  fpm: 1,
  wfm: 0,
  ffm: -1,
  rwfm: -2,
};

/** Readable names of the noise types (SP 1065 §4.1 terms). */
export const NOISE_LABEL: Readonly<Record<NoiseType, string>> = {
  wpm: 'white PM',
  fpm: 'flicker PM',
  wfm: 'white FM',
  ffm: 'flicker FM',
  rwfm: 'random-walk FM',
};

/** The noise type of the integer nearest to α, clamped to −2 … 2 (SP 1065 Table 3). */
export function noiseFromAlpha(alpha: number): NoiseType {
  const a = Math.max(-2, Math.min(2, Math.round(alpha)));
  switch (a) {
    case 2:
      return 'wpm';
    case 1:
      return 'fpm';
    case 0:
      return 'wfm';
    case -1:
      return 'ffm';
    default:
      return 'rwfm';
  }
}

/** Whether a string names a noise type. */
export function isNoiseType(value: unknown): value is NoiseType {
  return typeof value === 'string' && value in NOISE_ALPHA;
}
