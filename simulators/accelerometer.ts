/**
 * Driftbench's simulated 3-axis accelerometer behind the SPI bridge (register map in
 * simulators/README.md). Each chip-select is one `transfer(mosi) → miso` of equal length.
 *
 * Address byte: bit 7 = read (1) / write (0), bit 6 = auto-increment, bits 5–0 = register.
 * Data: X, Y, Z as 16-bit two's complement, little-endian (low byte at the lower address),
 * latched at chip-select so one burst read returns one consistent sample.
 * Sensitivity: 16000 digits/g at ±2 g (0.0625 mg/digit), 8000 at ±4 g, 4000 at ±8 g.
 */
import { createRng, subSeed, type Rng } from './noise';
import { type Clock, realClock } from './clock';
import { STANDARD_GRAVITY } from '../shared/protocol/parse';

export const REG = {
  IDENT: 0x00,
  REVISION: 0x01,
  CTRL: 0x10,
  STATUS: 0x11,
  SCRATCH: 0x12,
  OUT_X_L: 0x20,
  OUT_X_H: 0x21,
  OUT_Y_L: 0x22,
  OUT_Y_H: 0x23,
  OUT_Z_L: 0x24,
  OUT_Z_H: 0x25,
} as const;

export const IDENT_VALUE = 0x5d;
export const REVISION_VALUE = 0x12;
export const ADDR_READ = 0x80;
export const ADDR_AUTOINC = 0x40;
export const ADDR_MASK = 0x3f;
/** CTRL bits: EN (bit 0), RANGE (bits 2–1: 0 = ±2 g, 1 = ±4 g, 2 = ±8 g), SOFT_RESET (bit 7). */
export const CTRL_EN = 0x01;
export const CTRL_RANGE_SHIFT = 1;
export const CTRL_SOFT_RESET = 0x80;

/** Full-scale range (g) by the RANGE field; 3 is reserved and behaves as ±8 g. */
export const RANGE_G = [2, 4, 8, 8] as const;
/** Digits per g for each RANGE value. */
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
    this.regs[REG.IDENT] = IDENT_VALUE;
    this.regs[REG.REVISION] = REVISION_VALUE;
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
    const axis = (a: Axis) => g[a] * scale * (1 + c.sensErrPct[a] / 100) + (c.biasMg[a] + step[a]) / 1000;
    return { x: axis('x'), y: axis('y'), z: axis('z') };
  }

  /** Latches one sample into OUT_X..OUT_Z (as chip-select does). */
  private latch(): void {
    const ctrl = this.regs[REG.CTRL];
    if (!(ctrl & CTRL_EN)) {
      this.regs.fill(0, REG.OUT_X_L, REG.OUT_Z_H + 1);
      this.regs[REG.STATUS] = 0;
      return;
    }
    const range = (ctrl >> CTRL_RANGE_SHIFT) & 0x03;
    const perG = DIGITS_PER_G[range];
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
      this.regs[REG.OUT_X_L + 2 * i] = u & 0xff;
      this.regs[REG.OUT_X_L + 2 * i + 1] = u >> 8;
    });
    this.regs[REG.STATUS] = 0x01 | (clipped ? 0x02 : 0);
  }

  private writeReg(addr: number, value: number): void {
    if (addr === REG.CTRL) {
      if (value & CTRL_SOFT_RESET) this.reset();
      else this.regs[REG.CTRL] = value & 0x07;
    } else if (addr === REG.SCRATCH) this.regs[REG.SCRATCH] = value;
    // Every other register is read-only: writes are ignored.
  }

  /** One chip-select: clocks `mosi` out and returns the bytes read back on MISO. */
  transfer(mosi: Uint8Array): Uint8Array {
    const miso = new Uint8Array(mosi.length);
    if (mosi.length === 0) return miso;
    this.latch();
    miso[0] = 0xff; // MISO floats high (pulled up) during the address byte
    const read = (mosi[0] & ADDR_READ) !== 0;
    const inc = (mosi[0] & ADDR_AUTOINC) !== 0;
    let addr = mosi[0] & ADDR_MASK;
    for (let i = 1; i < mosi.length; i++) {
      if (read) miso[i] = this.regs[addr];
      else {
        miso[i] = 0xff;
        this.writeReg(addr, mosi[i]);
      }
      if (inc) addr = (addr + 1) & ADDR_MASK;
    }
    return miso;
  }
}
