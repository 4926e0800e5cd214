import { combineUncertainty } from './combineUncertainty';
import { counterResolution, type CounterKind } from './counter';
import { coverageFactor } from './coverage';
import { AnalysisError, assertNumber } from './errors';
import type { NoiseType } from './noise';

/** Shape of a component's probability distribution (GUM §4.3). */
export type Distribution = 'normal' | 'rectangular' | 'triangular' | 't';

/** One line of an uncertainty budget; value and contribution in `unit` (the capture's frequency unit). */
export interface BudgetComponent {
  name: string;
  symbol?: string;
  /** Standard uncertainty u(x_i). */
  value: number;
  unit: string;
  distribution: Distribution;
  sensitivity: number;
  /** |c_i|·u(x_i). */
  contribution: number;
  /** Degrees of freedom; Infinity for type B unless stated (serialises as null in JSON). */
  dof: number;
  type: 'A' | 'B';
  note: string;
  /** Where the model of this line comes from (document and section). */
  source?: string;
  /**
   * What the line stands for, so a comparison can tell shared inputs from independent ones:
   * 'type-a', 'resolution', 'reference-offset', 'reference-ageing', 'temperature', 'drift'.
   */
  key?: string;
}

export interface UncertaintyBudgetInput {
  /** Statistics of the gate-time readings in `unit` (e.g. from summarize). */
  /** dof: degrees of freedom of sd when not n − 1 (n − 2 after a line is fitted, n − 3 after a parabola). */
  stats: { n: number; mean: number; sd: number; sem: number; dof?: number };
  /** Nominal frequency in `unit`. */
  nominal: number;
  /** The frequency unit of stats and nominal (Hz, kHz, MHz, GHz; default Hz); every line is in it. */
  unit?: string;
  /** Gate time in seconds. */
  gateTime: number;
  /** Capture span in seconds (for the notes). */
  span?: number;
  /** Fractional Allan deviation at τ ≈ the capture span (largest τ available). */
  adevAtSpan?: number;
  /** EDF of adevAtSpan (default 1: an ADEV at the longest τ rests on very few differences). */
  adevEdf?: number;
  /** Dominant noise type at long τ, given or from estimateNoise. */
  noise?: NoiseType;
  /** Counter type and resolution: tRes in seconds (reciprocal, time-interval), counts (gated). */
  resolution: { kind: CounterKind; tRes?: number; counts?: number; assumed?: boolean };
  /**
   * Reference (timebase) fractional offset y_ref and its fractional standard uncertainty; with its
   * ageing rate (fractional per day, with standard uncertainty) and the days from its
   * verification to this capture, the offset's ageing since verification becomes a line.
   */
  reference?: {
    offset: number;
    u: number;
    dof?: number;
    ageing?: { perDay: number; uPerDay: number; days: number };
  };
  /**
   * The drift found in the series: trendSd is the standard deviation of the fitted trend over the
   * capture (fractional), ratePerDay the rate (fractional per day), model the fit.
   */
  drift?: { model: string; trendSd: number; ratePerDay: number; rateStderrPerDay: number };
  /** Temperature: fractional coefficient per °C, standard uncertainty of T, uncorrected ΔT bound. */
  temperature?: { deltaC?: number; coeffPerC?: number; uC?: number };
}

export interface UncertaintyBudget {
  /** Mean frequency in `unit`, reference-corrected when a reference is given. */
  mean: number;
  components: BudgetComponent[];
  combined: number;
  effectiveDof: number;
  /** k = max(2, t_0.975(⌊ν_eff⌋)) (coverageFactor). */
  k: number;
  /** "k = 2.31 from ν_eff = 8, about 95 % coverage". */
  coverage: string;
  expanded: number;
  /** expanded/nominal (fractional). */
  relativeExpanded: number;
  notes: string[];
}

const SQRT3 = Math.sqrt(3);

/**
 * GUM uncertainty budget of a mean frequency (JCGM 100:2008 §§4–6): type A from the readings,
 * type B for counter resolution (rectangular a/√3, §4.3.7), reference offset and its ageing since
 * verification, drift and temperature; combined per eq 10, ν_eff per G.2b, U = k·u_c with
 * k = max(2, t_0.975(ν_eff)) (G.4–G.6, coverageFactor). Domain: n ≥ 2, nominal > 0, gateTime > 0.
 */
export function uncertaintyBudget(input: UncertaintyBudgetInput): UncertaintyBudget {
  const { stats, nominal, gateTime } = input;
  assertNumber(nominal, 'nominal', true);
  assertNumber(gateTime, 'gateTime', true);
  assertNumber(stats?.n, 'stats.n');
  assertNumber(stats.mean, 'stats.mean');
  assertNumber(stats.sd, 'stats.sd');
  assertNumber(stats.sem, 'stats.sem');
  if (stats.n < 2) throw new AnalysisError('too-short', 'a type A evaluation needs ≥ 2 readings');
  const notes: string[] = [];
  const components: BudgetComponent[] = [typeA(input, notes)];

  const unit = input.unit ?? 'Hz';
  const res = counterResolution({ ...input.resolution, gateTime, f: nominal, unit });
  const r = input.resolution;
  const how =
    r.kind === 'gated'
      ? `gated: ±${fmt(r.counts ?? 1)} count / ${fmt(gateTime)} s gate`
      : `${r.kind}: ±${fmt(r.tRes ?? 100e-12)} s / ${fmt(gateTime)} s gate = ±${res.relative.toExponential(2)}`;
  components.push(
    component({
      name: 'Counter resolution',
      symbol: 'u_res',
      value: res.absolute / SQRT3,
      distribution: 'rectangular',
      type: 'B',
      key: 'resolution',
      source: 'Counter theory (docs/references.md); JCGM 100 §4.3.7',
      note:
        `±${fmt(res.absolute)} ${unit} per reading (${how}${r.assumed ? '; counter type not recorded, assumed' : ''}), a/√3. ` +
        'Not divided by √n: quantisation errors of successive readings need not be independent ' +
        '(identical readings say nothing below one count), so the single-reading value is kept.',
    }),
  );

  let mean = stats.mean;
  if (input.reference) {
    const { offset, u, dof } = input.reference;
    assertNumber(offset, 'reference.offset');
    assertNumber(u, 'reference.u');
    mean = stats.mean * (1 + offset);
    components.push(
      component({
        name: 'Reference offset',
        symbol: 'u_ref',
        value: Math.abs(u) * nominal,
        distribution: 'normal',
        type: 'B',
        dof,
        key: 'reference-offset',
        source: 'Reference calibration record',
        note:
          `Timebase offset ${offset.toExponential(2)} corrected (f·(1 + y_ref)); its standard ` +
          `uncertainty ${Math.abs(u).toExponential(2)} × nominal.`,
      }),
    );
    const ageing = input.reference.ageing;
    if (ageing) {
      assertNumber(ageing.perDay, 'reference.ageing.perDay');
      assertNumber(ageing.uPerDay, 'reference.ageing.uPerDay');
      assertNumber(ageing.days, 'reference.ageing.days');
      const days = Math.max(0, ageing.days);
      const rate = Math.hypot(ageing.perDay, ageing.uPerDay);
      components.push(
        component({
          name: 'Reference ageing since verification',
          symbol: 'u_age',
          value: rate * days * nominal,
          distribution: 'normal',
          type: 'B',
          key: 'reference-ageing',
          source: 'Reference calibration record; JCGM 100 §4.3 (uncorrected known effect)',
          note:
            `Offset verified ${fmt(days)} days before this capture and not corrected for ageing: ` +
            `√(a² + u(a)²) × days × nominal with a = ${ageing.perDay.toExponential(2)}/day, u(a) = ${ageing.uPerDay.toExponential(2)}/day.`,
        }),
      );
    }
  } else {
    notes.push('No reference given: the counter timebase is taken as exact, which it is not.');
  }

  const temp = input.temperature;
  if (temp && temp.coeffPerC !== undefined) {
    assertNumber(temp.coeffPerC, 'temperature.coeffPerC');
    const c = Math.abs(temp.coeffPerC) * nominal; // unit per °C
    if (temp.uC !== undefined) {
      assertNumber(temp.uC, 'temperature.uC');
      components.push(
        component({
          name: 'Temperature (measurement)',
          symbol: 'u_T',
          value: Math.abs(temp.uC) * c,
          distribution: 'normal',
          type: 'B',
          key: 'temperature',
          source: 'JCGM 100 eq. 10',
          note: `u(T) = ${fmt(Math.abs(temp.uC))} °C × |coefficient| × nominal (${fmt(c)} ${unit}/°C).`,
        }),
      );
    }
    if (temp.deltaC !== undefined) {
      assertNumber(temp.deltaC, 'temperature.deltaC');
      components.push(
        component({
          name: 'Temperature (uncorrected offset)',
          symbol: 'u_ΔT',
          value: (Math.abs(temp.deltaC) * c) / SQRT3,
          distribution: 'rectangular',
          type: 'B',
          key: 'temperature',
          source: 'JCGM 100 §4.3.7',
          note:
            `Uncorrected ΔT = ${fmt(temp.deltaC)} °C from reference conditions taken as a bound: ` +
            'a = |ΔT| × |coefficient| × nominal, a/√3.',
        }),
      );
    }
  } else if (temp) {
    notes.push('Temperature given without a coefficient: no temperature component.');
  }

  if (input.drift && input.drift.model !== 'none') {
    const d = input.drift;
    assertNumber(d.trendSd, 'drift.trendSd');
    components.push(
      component({
        name: 'Drift during the capture',
        symbol: 'u_drift',
        value: Math.abs(d.trendSd) * nominal,
        distribution: 'rectangular',
        type: 'B',
        key: 'drift',
        source: 'JCGM 100 §4.3.7 (a linear ramp spreads the level rectangularly); NIST SP 1065 §6',
        note:
          `A ${d.model} drift of ${(d.ratePerDay * 1e9).toPrecision(3)} ± ${(d.rateStderrPerDay * 1e9).toPrecision(2)} ppb/day: ` +
          'the mean depends on when the capture stops; the standard deviation of the fitted trend over the capture ' +
          '(|rate| × span/√12 for a line) × nominal.',
      }),
    );
  }

  const { uc, nuEff } = combineUncertainty(components);
  const coverage = coverageFactor(nuEff);
  const expanded = coverage.k * uc;
  return {
    mean,
    components: components.map((line) => ({ ...line, unit })),
    combined: uc,
    effectiveDof: nuEff,
    k: coverage.k,
    coverage: coverage.text,
    expanded,
    relativeExpanded: expanded / nominal,
    notes,
  };
}

/**
 * Type A: SEM (ν = n − 1) when the noise is white (white FM: independent readings; PM: SEM is
 * conservative), otherwise the Allan deviation at the capture span × nominal, which SEM
 * underestimates for flicker and random-walk FM (SP 1065 §1.6 and Table 3; common practice).
 * Unknown noise with an ADEV given: the larger of the two.
 */
function typeA(input: UncertaintyBudgetInput, notes: string[]): BudgetComponent {
  const { stats, nominal, noise, adevAtSpan } = input;
  const semComponent = (note: string): BudgetComponent =>
    component({
      name: 'Repeatability (SEM)',
      symbol: 'u_A',
      value: stats.sem,
      distribution: 't',
      type: 'A',
      dof: stats.dof ?? stats.n - 1,
      key: 'type-a',
      source: 'JCGM 100 §4.2',
      note,
    });
  const adevHz = adevAtSpan !== undefined ? Math.abs(adevAtSpan) * nominal : undefined;
  if (adevAtSpan !== undefined) assertNumber(adevAtSpan, 'adevAtSpan');
  const adevDof = input.adevEdf ?? 1;
  const span = input.span !== undefined ? ` (τ ≈ ${fmt(input.span)} s)` : '';
  const adevComponent = (note: string): BudgetComponent =>
    component({
      name: 'Long-term instability (ADEV at span)',
      symbol: 'u_A',
      value: adevHz!,
      distribution: 'normal',
      type: 'A',
      dof: adevDof,
      key: 'type-a',
      source: 'NIST SP 1065 §1.6, Table 3',
      note,
    });

  if (noise === 'wfm' || noise === 'wpm' || noise === 'fpm') {
    return semComponent(
      `s/√n of ${stats.n} readings; ` +
        (noise === 'wfm' ? 'white FM: readings independent.' : 'PM noise: s/√n is conservative.'),
    );
  }
  if (noise === 'ffm' || noise === 'rwfm') {
    if (adevHz === undefined) {
      notes.push(
        `Noise is ${noise} but no ADEV at span was given: s/√n understates the uncertainty.`,
      );
      return semComponent(
        's/√n; understated for flicker or random-walk FM (no ADEV at span given).',
      );
    }
    return adevComponent(`σ_y${span} × nominal: s/√n does not fall as 1/√n for ${noise}.`);
  }
  if (adevHz === undefined) {
    return semComponent('s/√n; noise type unknown, white FM assumed.');
  }
  return adevHz > stats.sem
    ? adevComponent(`Noise type unknown: σ_y${span} × nominal exceeds s/√n and is used.`)
    : semComponent(`Noise type unknown: s/√n exceeds σ_y${span} × nominal and is used.`);
}

function component(c: {
  name: string;
  symbol?: string;
  value: number;
  unit?: string;
  sensitivity?: number;
  distribution: Distribution;
  type: 'A' | 'B';
  dof?: number;
  note: string;
  source?: string;
  key?: string;
}): BudgetComponent {
  const sensitivity = c.sensitivity ?? 1;
  return {
    ...(c.source ? { source: c.source } : {}),
    ...(c.key ? { key: c.key } : {}),
    name: c.name,
    symbol: c.symbol,
    value: c.value,
    unit: c.unit ?? 'Hz',
    distribution: c.distribution,
    sensitivity,
    contribution: Math.abs(sensitivity) * c.value,
    dof: c.dof ?? Infinity,
    type: c.type,
    note: c.note,
  };
}

function fmt(v: number): string {
  return Number(v.toPrecision(3)).toString();
}
