/**
 * Driftbench's simulated 3-axis accelerometer behind the SPI bridge, register map DBX-3 (in
 * simulators/README.md). Each chip-select is one `transfer(mosi) → miso` of equal length.
 *
 * Command byte: bits 7–2 = register (0–63), bit 1 = direction (1 read, 0 write), bit 0 = stream
 * (1: the register advances after every data byte). During the command byte MISO carries the
 * FLAGS register, so every exchange reports whether a fresh sample was latched.
 * Data: X, Y, Z as 16-bit two's complement, big-endian (bits 15–8 at the lower address, the order
 * they leave the wire), latched at chip-select so one streamed read returns one consistent sample.
 * Sensitivity: 16000 digits/g at ±2 g (0.0625 mg/digit), 8000 at ±4 g, 4000 at ±8 g.
 */
import { createRng, subSeed, type Rng } from './noise';
import { type Clock, realClock } from './clock';
import { STANDARD_GRAVITY } from '../shared/protocol/parse';

/** DBX-3 registers: identity, set-up, and the sample as three big-endian words (X1 = bits 15–8 of X). */
export const REG = {
  PART: 0x00,
  REV: 0x01,
  MODE: 0x04,
  FLAGS: 0x05,
  MEMO: 0x06,
  X1: 0x08,
  X0: 0x09,
  Y1: 0x0a,
  Y0: 0x0b,
  Z1: 0x0c,
  Z0: 0x0d,
} as const;

export const PART_VALUE = 0xdb;
export const REV_VALUE = 0x03;
/** Command byte fields. */
export const CMD_READ = 0x02;
export const CMD_STREAM = 0x01;
export const CMD_REGISTER_SHIFT = 2;
export const REGISTER_MASK = 0x3f;
/** MODE bits: RUN (bit 0), SPAN (bits 3–2: 0 = ±2 g, 1 = ±4 g, 2 = ±8 g), RESTART (bit 7). */
export const MODE_RUN = 0x01;
export const MODE_SPAN_SHIFT = 2;
export const MODE_RESTART = 0x80;
/** FLAGS bits: FRESH (a sample was latched at this chip-select), CLIPPED (an axis hit full scale). */
export const FLAG_FRESH = 0x01;
export const FLAG_CLIPPED = 0x02;

/** The command byte for a register access. */
export function command(register: number, read: boolean, stream: boolean): number {
  return (
    ((register & REGISTER_MASK) << CMD_REGISTER_SHIFT) |
    (read ? CMD_READ : 0) |
    (stream ? CMD_STREAM : 0)
  );
}

/** Full-scale range (g) by the SPAN field; 3 is reserved and behaves as ±8 g. */
export const RANGE_G = [2, 4, 8, 8] as const;
/** Digits per g for each SPAN value. */
export const DIGITS_PER_G = [16000, 8000, 4000, 4000] as const;

export type Axis = 'x' | 'y' | 'z';
export type Vec3 = Record<Axis, number>;

/** Pitch tips X towards gravity, roll tips Y; flat = 0/0. */
export interface Orientation {
  pitchDeg: number;
  rollDeg: number;
}

export const ORIENTATIONS = {
  flat: { pitchDeg: 0, rollDeg: 0 }, // +1 g on Z
  edge: { pitchDeg: 90, rollDeg: 0 }, // +1 g on X
  'edge-y': { pitchDeg: 0, rollDeg: 90 }, // +1 g on Y
  inverted: { pitchDeg: 0, rollDeg: 180 }, // −1 g on Z
  // The six axis poses of a tilt check on any axis (the capture's recorded orientation names).
  'x-up': { pitchDeg: 90, rollDeg: 0 }, // +1 g on X
  'x-down': { pitchDeg: -90, rollDeg: 0 }, // −1 g on X
  'y-up': { pitchDeg: 0, rollDeg: 90 }, // +1 g on Y
  'y-down': { pitchDeg: 0, rollDeg: -90 }, // −1 g on Y
  'z-up': { pitchDeg: 0, rollDeg: 0 }, // +1 g on Z
  'z-down': { pitchDeg: 0, rollDeg: 180 }, // −1 g on Z
} as const satisfies Record<string, Orientation>;
export type OrientationName = keyof typeof ORIENTATIONS;

/** Gravity's direction in the sensor frame (unit vector) for an orientation. */
export function gravityVector(o: Orientation): Vec3 {
  const p = (o.pitchDeg * Math.PI) / 180;
  const r = (o.rollDeg * Math.PI) / 180;
  return { x: Math.sin(p), y: Math.sin(r) * Math.cos(p), z: Math.cos(r) * Math.cos(p) };
}

export interface AccelConfig {
  orientation: Orientation;
  /** White noise per sample and axis, mg rms. */
  noiseMg: number;
  biasMg: Vec3;
  /** Sensitivity error per axis, %. */
  sensErrPct: Vec3;
  /** Local gravity, m/s² (default standard gravity: readings of 1 g exactly when flat). */
  localGravity: number;
  /** Bias change applied after `afterS` simulated seconds (the exposure scenario). */
  biasStep: { mg: Vec3; afterS: number } | null;
  accel: number;
  seed: number;
}

export class SimAccelerometer {
  private readonly regs = new Uint8Array(64);
  private readonly rng: Rng;
  private readonly t0: number;

  constructor(
    readonly config: AccelConfig,
    private readonly clock: Clock = realClock(),
  ) {
    this.rng = createRng(subSeed(config.seed, 3));
    this.t0 = clock.now();
    this.reset();
  }

  private reset(): void {
    this.regs.fill(0);
    this.regs[REG.PART] = PART_VALUE;
    this.regs[REG.REV] = REV_VALUE;
  }

  simNow(): number {
    return ((this.clock.now() - this.t0) / 1000) * this.config.accel;
  }

  /** The true specific force on each axis, g (noise-free), at simulated time t. */
  expectedG(t = this.simNow()): Vec3 {
    const c = this.config;
    const g = gravityVector(c.orientation);
    const scale = c.localGravity / STANDARD_GRAVITY;
    const step = c.biasStep && t >= c.biasStep.afterS ? c.biasStep.mg : { x: 0, y: 0, z: 0 };
    const axis = (a: Axis) =>
      g[a] * scale * (1 + c.sensErrPct[a] / 100) + (c.biasMg[a] + step[a]) / 1000;
    return { x: axis('x'), y: axis('y'), z: axis('z') };
  }

  /** Latches one sample into X1…Z0 (as chip-select does). */
  private latch(): void {
    const mode = this.regs[REG.MODE];
    if (!(mode & MODE_RUN)) {
      this.regs.fill(0, REG.X1, REG.Z0 + 1);
      this.regs[REG.FLAGS] = 0;
      return;
    }
    const span = (mode >> MODE_SPAN_SHIFT) & 0x03;
    const perG = DIGITS_PER_G[span];
    const e = this.expectedG();
    let clipped = false;
    (['x', 'y', 'z'] as const).forEach((a, i) => {
      const g = e[a] + (this.config.noiseMg / 1000) * this.rng.gauss();
      let d = Math.round(g * perG);
      if (d > 32767 || d < -32768) {
        clipped = true;
        d = Math.max(-32768, Math.min(32767, d));
      }
      const u = d & 0xffff;
      this.regs[REG.X1 + 2 * i] = u >> 8;
      this.regs[REG.X1 + 2 * i + 1] = u & 0xff;
    });
    this.regs[REG.FLAGS] = FLAG_FRESH | (clipped ? FLAG_CLIPPED : 0);
  }

  private writeReg(register: number, value: number): void {
    if (register === REG.MODE) {
      if (value & MODE_RESTART) this.reset();
      else this.regs[REG.MODE] = value & (MODE_RUN | (0x03 << MODE_SPAN_SHIFT));
    } else if (register === REG.MEMO) this.regs[REG.MEMO] = value;
    // Every other register is read-only: writes are ignored.
  }

  /** One chip-select: clocks `mosi` out and returns the bytes read back on MISO. */
  transfer(mosi: Uint8Array): Uint8Array {
    const miso = new Uint8Array(mosi.length);
    if (mosi.length === 0) return miso;
    this.latch();
    miso[0] = this.regs[REG.FLAGS]; // the command byte's slot reports FLAGS
    const read = (mosi[0] & CMD_READ) !== 0;
    const stream = (mosi[0] & CMD_STREAM) !== 0;
    let register = (mosi[0] >> CMD_REGISTER_SHIFT) & REGISTER_MASK;
    for (let i = 1; i < mosi.length; i++) {
      if (read) miso[i] = this.regs[register];
      else {
        miso[i] = 0x00;
        this.writeReg(register, mosi[i]);
      }
      if (stream) register = (register + 1) & REGISTER_MASK;
    }
    return miso;
  }
}
