/**
 * Words and figures of a crystal's stability judgement (σy at the limit's τ, its 95 % interval, the
 * limit and the verdict) for the study matrix and the capture page: σy × 1e9 = ppb, τ in s.
 */
import type { StabilityAtTauWire, StabilityJudgement } from '../api/stabilityLimit';

/** A fraction as ppb with three significant figures ("0.316 ppb"). */
export function ppb(fraction: number): string {
  return `${Number((fraction * 1e9).toPrecision(3))} ppb`;
}

/** Seconds, briefly ("10 s", "0.5 s"). */
export function seconds(s: number): string {
  return `${Number(s.toPrecision(4))} s`;
}

export interface StabilityView {
  /** "σy(10 s)", with the τ actually judged. */
  title: string;
  /** "0.316 ppb" or null without a figure. */
  value: string | null;
  /** "95 % interval 0.29 … 0.35 ppb". */
  interval: string | null;
  /** "≤ 0.5 ppb at τ = 10 s". */
  limit: string;
  verdict: StabilityJudgement['verdict'];
  /** Why there is no figure ("inconclusive: capture too short …"), or a τ note. */
  note: string | null;
  /** "baseline 0.31 ppb → 0.32 ppb" (for information), or null. */
  change: string | null;
}

function figureValue(s: StabilityAtTauWire | null): string | null {
  return s?.figure ? ppb(s.figure.dev) : null;
}

export function stabilityView(s: StabilityJudgement): StabilityView {
  const f = s.after.figure;
  const pct = Math.round(s.confidence * 100);
  const tauNote =
    f && Math.abs(f.tau - f.tauRequested) > 1e-9 * f.tauRequested
      ? `judged at τ = ${seconds(f.tau)}, the capture's nearest (m = ${f.m})`
      : null;
  const before = figureValue(s.before);
  return {
    title: `σy(${seconds(f?.tau ?? s.tauS)})`,
    value: f ? ppb(f.dev) : null,
    interval: f ? `${pct} % interval ${Number((f.lo * 1e9).toPrecision(3))} … ${ppb(f.hi)}` : null,
    limit: `≤ ${Number(s.limitPpb.toPrecision(4))} ppb at τ = ${seconds(s.tauS)}`,
    verdict: s.verdict,
    note: s.reason ?? tauNote,
    change:
      s.before && f
        ? `baseline ${before ?? `no figure (${s.before.reason})`} → ${ppb(f.dev)}`
        : null,
  };
}
