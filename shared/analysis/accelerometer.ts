import { AnalysisError, assertNumber } from './errors';
import { G_N } from './gravity';
import { guardBandVerdict, type Verdict } from './verdict';

/** How an axis register is laid out. */
export interface AxisFormat {
  /** Significant bits of the two's-complement value. */
  bits: 10 | 12 | 16;
  /** Value in the top `bits` of the 16-bit word (true) or the bottom ones (false). */
  leftJustified: boolean;
  /** Scale in mg per least-significant digit (datasheet). */
  mgPerDigit: number;
}

/**
 * Decodes one accelerometer axis to mg from a raw 16-bit word or [high byte, low byte]:
 * two's complement of `bits` bits, left- or right-justified, × mgPerDigit (common register
 * layout of MEMS accelerometers, makers' datasheets; no single source). Domain: word 0…65535,
 * bytes 0…255.
 */
export function decodeAxis(raw: number | ArrayLike<number>, format: AxisFormat): number {
  let word: number;
  if (typeof raw === 'number') {
    word = raw;
  } else {
    if (raw.length !== 2) throw new AnalysisError('bad-argument', 'expected [high byte, low byte]');
    for (let i = 0; i < 2; i++) {
      if (!Number.isInteger(raw[i]) || raw[i] < 0 || raw[i] > 255) {
        throw new AnalysisError('bad-argument', `byte ${i} is not 0…255`);
      }
    }
    word = (raw[0] << 8) | raw[1];
  }
  if (!Number.isInteger(word) || word < 0 || word > 0xffff) {
    throw new AnalysisError('bad-argument', 'raw word must be an integer 0…65535');
  }
  const { bits, leftJustified, mgPerDigit } = format;
  if (bits !== 10 && bits !== 12 && bits !== 16) {
    throw new AnalysisError('bad-argument', 'bits must be 10, 12 or 16');
  }
  assertNumber(mgPerDigit, 'mgPerDigit', true);
  let counts: number;
  if (leftJustified) {
    const signed = word >= 0x8000 ? word - 0x10000 : word;
    counts = Math.floor(signed / 2 ** (16 - bits)); // arithmetic shift
  } else {
    const full = 2 ** bits;
    counts = word % full;
    if (counts >= full / 2) counts -= full;
  }
  return counts * mgPerDigit;
}

/**
 * Tilt of an axis from horizontal in degrees, asin(a/1 g) with a in g clamped to ±1 (static
 * single-axis tilt sensing; common practice, e.g. makers' application notes, no single source).
 * Prefer tiltFromAxes: this one loses sensitivity near ±90° and assumes 1 g = g_n.
 */
export function tiltFromAxis(aG: number): number {
  assertNumber(aG, 'aG');
  return (Math.asin(Math.max(-1, Math.min(1, aG))) * 180) / Math.PI;
}

/** Tilt from two axes and how well their magnitude agrees with local gravity. */
export interface TwoAxisTilt {
  /** Angle of the sensing axis above horizontal, degrees, atan2(a_axis, a_normal) in (−180°, 180°]. */
  tiltDeg: number;
  /** √(a_axis² + a_normal²) in mg. */
  magnitudeMg: number;
  /** 1 g of local gravity in the sensor's mg (1000·g_local/g_n). */
  expectedMg: number;
  /** (magnitude − expected)/expected × 100: large values mean motion, a third-axis component or a calibration error. */
  magnitudeErrorPct: number;
}

/**
 * Tilt of a sensing axis from two orthogonal axes in the plane of rotation, atan2(a_axis, a_normal)
 * (common practice in makers' tilt-sensing application notes, no single source): unlike
 * asin(a/1 g) over one axis it keeps full sensitivity near ±90°, does not depend on the scale
 * factor, and does not assume the local gravity equals g_n. Local gravity (m/s², default g_n;
 * see wgs84Gravity) sets the expected magnitude 1000·g/g_n mg, against which the two-axis
 * magnitude is checked. Domain: finite readings, not both zero; g > 0.
 */
export function tiltFromAxes(axisMg: number, normalMg: number, localGravity = G_N): TwoAxisTilt {
  assertNumber(axisMg, 'axisMg');
  assertNumber(normalMg, 'normalMg');
  assertNumber(localGravity, 'localGravity', true);
  const magnitudeMg = Math.hypot(axisMg, normalMg);
  if (!(magnitudeMg > 0))
    throw new AnalysisError('bad-argument', 'both axes read zero: no tilt can be formed');
  const expectedMg = (1000 * localGravity) / G_N;
  return {
    tiltDeg: (Math.atan2(axisMg, normalMg) * 180) / Math.PI,
    magnitudeMg,
    expectedMg,
    magnitudeErrorPct: ((magnitudeMg - expectedMg) / expectedMg) * 100,
  };
}

/** Offset and sensitivity of one axis. */
export interface AxisCalibration {
  offsetMg: number;
  /** Measured scale ÷ ideal scale (1 = perfect). */
  sensitivity: number;
  /** (sensitivity − 1) × 100. */
  sensitivityErrorPct: number;
}

/**
 * Two-position (flip) calibration of an axis read in mg pointing up (+1 g) and down (−1 g):
 * offset = (up + down)/2, sensitivity = (up − down)/2 ÷ the ideal 1 g reading 1000·g/g_n mg
 * (common practice, no source). `g` is local gravity in m/s² (default g_n; see wgs84Gravity).
 */
export function offsetSensitivityFromFlipPair(
  upMg: number,
  downMg: number,
  g: number = G_N,
): AxisCalibration {
  assertNumber(upMg, 'up');
  assertNumber(downMg, 'down');
  assertNumber(g, 'g', true);
  const ideal = (1000 * g) / G_N;
  const sensitivity = (upMg - downMg) / 2 / ideal;
  if (!(sensitivity > 0)) throw new AnalysisError('bad-argument', 'up must read more than down');
  return {
    offsetMg: (upMg + downMg) / 2,
    sensitivity,
    sensitivityErrorPct: (sensitivity - 1) * 100,
  };
}

/** A three-axis reading in mg. */
export interface Vec3 {
  x: number;
  y: number;
  z: number;
}

/** The six orientations, named by the axis that points up: '+x' means x reads +1 g. */
export type SixPositionReadings = Record<'+x' | '-x' | '+y' | '-y' | '+z' | '-z', Vec3>;

/** Per-axis six-position result; offsetHorizontalMg averages the four positions where it is level. */
export interface SixPositionAxis extends AxisCalibration {
  offsetHorizontalMg: number;
}

/**
 * Six-position calibration (each axis up and down; common practice, no source): each axis's
 * offset and sensitivity from its flip pair, plus the mean of its four level readings as a second
 * offset estimate. Domain: six finite readings in mg; g as offsetSensitivityFromFlipPair.
 */
export function sixPosition(
  readings: SixPositionReadings,
  g: number = G_N,
): Record<'x' | 'y' | 'z', SixPositionAxis> {
  const axes = ['x', 'y', 'z'] as const;
  const result = {} as Record<'x' | 'y' | 'z', SixPositionAxis>;
  for (const axis of axes) {
    const up = readings[`+${axis}`];
    const down = readings[`-${axis}`];
    if (!up || !down) throw new AnalysisError('bad-argument', `missing ±${axis} position`);
    const level = axes
      .filter((a) => a !== axis)
      .flatMap((a) => [readings[`+${a}`], readings[`-${a}`]]);
    let sum = 0;
    for (const r of level) {
      if (!r) throw new AnalysisError('bad-argument', 'missing position');
      assertNumber(r[axis], `${axis} reading`);
      sum += r[axis];
    }
    result[axis] = {
      ...offsetSensitivityFromFlipPair(up[axis], down[axis], g),
      offsetHorizontalMg: sum / level.length,
    };
  }
  return result;
}

/** One axis's calibration with optional standard uncertainties. */
export interface SensorState extends AxisCalibration {
  uOffsetMg?: number;
  /** Standard uncertainty of sensitivityErrorPct, in percentage points. */
  uSensitivityPct?: number;
}

/** A before/after check of one quantity. */
export interface SensorCheck {
  delta: number;
  u: number;
  expanded: number;
  limit: number;
  verdict: Verdict;
  significant: boolean;
}

/**
 * Before/after check of an axis's offset (mg) and sensitivity (% points), u(Δ) = √(u_b² + u_a²),
 * U = k·u (k = 2, GUM §6.3), verdict by guardBandVerdict (ILAC-G8:09/2019, w = U). Missing
 * uncertainties count as zero (noted). Domain: limits > 0.
 */
export function compareSensor(
  before: SensorState,
  after: SensorState,
  opts: { offsetLimitMg: number; sensitivityLimitPct: number; confidenceK?: number },
): { offset: SensorCheck; sensitivity: SensorCheck; notes: string[] } {
  const k = opts.confidenceK ?? 2;
  const notes: string[] = [];
  if (before.uOffsetMg === undefined || after.uOffsetMg === undefined) {
    notes.push('Offset uncertainty not given for both states: taken as zero, so U is understated.');
  }
  if (before.uSensitivityPct === undefined || after.uSensitivityPct === undefined) {
    notes.push(
      'Sensitivity uncertainty not given for both states: taken as zero, so U is understated.',
    );
  }
  const check = (b: number, a: number, ub: number, ua: number, limit: number): SensorCheck => {
    assertNumber(b, 'before');
    assertNumber(a, 'after');
    const u = Math.hypot(ub, ua);
    const expanded = k * u;
    const delta = a - b;
    return {
      delta,
      u,
      expanded,
      limit,
      verdict: guardBandVerdict(delta, expanded, limit),
      significant: Math.abs(delta) > expanded,
    };
  };
  return {
    offset: check(
      before.offsetMg,
      after.offsetMg,
      before.uOffsetMg ?? 0,
      after.uOffsetMg ?? 0,
      opts.offsetLimitMg,
    ),
    sensitivity: check(
      before.sensitivityErrorPct,
      after.sensitivityErrorPct,
      before.uSensitivityPct ?? 0,
      after.uSensitivityPct ?? 0,
      opts.sensitivityLimitPct,
    ),
    notes,
  };
}
