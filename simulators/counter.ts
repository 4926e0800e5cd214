/**
 * Driftbench's simulated bench frequency counter, byte-exact as on a serial line.
 *
 * - talk mode: one reading per gate (plus dead time), unasked, `+1.600001234567E+07\r\n`.
 * - query mode: SCPI commands terminated by LF, CR or CR LF; replies end with CR LF.
 *
 * The core is driven by an injectable {@link Clock}; time acceleration divides every real
 * wait, so at accel = 100 a 1 s gate takes 10 ms of wall time. `nextReading()` is the pure
 * measurement step: it advances simulated time by one gate plus dead time.
 */
import { createLineFramer } from '../shared/protocol/framing';
import { type Clock, type TimerHandle, realClock } from './clock';
import { createRng, subSeed, type Rng } from './noise';
import { Oscillator, type OscillatorConfig } from './oscillator';
import {
  formatScpiNumber,
  headerMatches,
  parseTimeArg,
  splitCommands,
  type ScpiCommand,
} from './scpiParser';

export const COUNTER_IDN = 'Driftbench Labs,SIM-CNT-1';
export const GATE_MIN = 0.01;
export const GATE_MAX = 100;

export interface CounterConfig {
  oscillator: OscillatorConfig;
  /** Gate time at power-on and after *RST, s (0.01–100). */
  gate: number;
  /** Dead time between gates, s. */
  deadTime: number;
  /** Fractional offset of the counter's own timebase: it displays f/(1 + refOffset). */
  refOffset: number;
  /** Wall-clock speed-up: 1 = real time, 100 = 100× faster. */
  accel: number;
  /** Probability that an output line is corrupted (0–1). */
  garble: number;
  seed: number;
  mode: 'talk' | 'query';
}

export interface CounterReading {
  /** Simulated start of the gate, s since power-on. */
  t: number;
  gate: number;
  /** The displayed frequency, Hz (before formatting). */
  value: number;
  /** The DUT's true mean fractional frequency over the gate. */
  yTrue: number;
  tempC: number;
}

const CRLF = '\r\n';
const MAX_ERRORS = 10;

export class SimCounter {
  /** Receives every byte the counter sends on its TX line. */
  onData: (bytes: Uint8Array) => void = () => {};

  private readonly osc: Oscillator;
  private readonly garbleRng: Rng;
  private readonly enc = new TextEncoder();
  private readonly framer = createLineFramer({ terminator: 'auto', maxLine: 256 });
  private gate: number;
  private simCursor = 0; // simulated seconds: the earliest start of the next gate
  private readonly t0: number;
  private errors: string[] = [];
  private last: CounterReading | null = null;
  private measuring: Promise<CounterReading> | null = null;
  private work: Promise<void> = Promise.resolve();
  private talkTimer: TimerHandle | null = null;
  private readonly timers = new Set<TimerHandle>();
  private stopped = false;

  constructor(
    readonly config: CounterConfig,
    private readonly clock: Clock = realClock(),
  ) {
    if (!(config.gate >= GATE_MIN && config.gate <= GATE_MAX))
      throw new RangeError('gate out of range');
    if (!(config.accel > 0)) throw new RangeError('accel must be positive');
    this.gate = config.gate;
    this.osc = new Oscillator(config.oscillator, createRng(subSeed(config.seed, 1)), config.gate);
    this.garbleRng = createRng(subSeed(config.seed, 2));
    this.t0 = clock.now();
  }

  get gateTime(): number {
    return this.gate;
  }

  /** Simulated seconds since power-on, from the clock. */
  simNow(): number {
    return ((this.clock.now() - this.t0) / 1000) * this.config.accel;
  }

  /** Measures one gate starting at `start` (default: right after the previous one). Pure of I/O. */
  nextReading(start = this.simCursor): CounterReading {
    const t = Math.max(start, this.simCursor);
    const s = this.osc.sample(t, this.gate);
    const fTrue = this.config.oscillator.nominal * (1 + s.y);
    const value = fTrue / (1 + this.config.refOffset);
    this.simCursor = t + this.gate + this.config.deadTime;
    this.last = { t, gate: this.gate, value, yTrue: s.y, tempC: s.tempC };
    return this.last;
  }

  /** Formats a reading as the counter prints it, without the terminator. */
  static format(r: CounterReading): string {
    return formatScpiNumber(r.value, 12);
  }

  /** Begins talk-only streaming (no-op in query mode). */
  start(): void {
    if (this.config.mode !== 'talk' || this.stopped) return;
    const period = this.gate + this.config.deadTime;
    const realPeriodMs = (period * 1000) / this.config.accel;
    const begin = this.clock.now();
    let k = 0;
    const tick = () => {
      this.talkTimer = null;
      if (this.stopped) return;
      // Catch up on every gate that ended by now (timers cannot fire faster than ~1 ms).
      let burst = 0;
      while (begin + (k + 1) * realPeriodMs <= this.clock.now() + 1e-9 && burst < 1000) {
        this.emitLine(SimCounter.format(this.nextReading(k * period)));
        k++;
        burst++;
      }
      const due = begin + (k + 1) * realPeriodMs - this.clock.now();
      this.talkTimer = this.clock.setTimer(tick, due);
    };
    this.talkTimer = this.clock.setTimer(tick, realPeriodMs);
  }

  /** Stops streaming and cancels every pending timer; the device stays silent afterwards. */
  stop(): void {
    this.stopped = true;
    if (this.talkTimer) this.clock.clearTimer(this.talkTimer);
    for (const t of this.timers) this.clock.clearTimer(t);
    this.timers.clear();
  }

  /** Bytes arriving on the counter's RX line. Talk-only counters ignore them. */
  write(bytes: Uint8Array): void {
    if (this.config.mode === 'talk' || this.stopped) return;
    for (const frame of this.framer.push(bytes)) {
      const text = frame.text;
      this.work = this.work.then(() => this.execLine(text)).catch(() => undefined);
    }
  }

  /** Resolves once every command received so far has been handled (for tests). */
  idle(): Promise<void> {
    return this.work;
  }

  private async execLine(line: string): Promise<void> {
    if (this.stopped) return;
    if (line.includes('\uFFFD')) {
      this.pushError(-102, 'Syntax error');
      return;
    }
    const replies: string[] = [];
    for (const cmd of splitCommands(line)) {
      const reply = await this.exec(cmd);
      if (this.stopped) return;
      if (reply !== null) replies.push(reply);
    }
    if (replies.length > 0) this.emitLine(replies.join(';'));
  }

  private async exec(cmd: ScpiCommand): Promise<string | null> {
    const h = cmd.header;
    const is = (p: string) => headerMatches(h, p);
    if (cmd.query) {
      if (is('*IDN'))
        return `${COUNTER_IDN},SN${String(this.config.seed % 100000).padStart(5, '0')},1.0.0`;
      if (is('*OPC')) return '1';
      if (is('SYSTem:ERRor[:NEXT]')) return this.errors.shift() ?? '0,"No error"';
      if (is('SYSTem:VERSion')) return '1999.0';
      if (is('[SENSe]:FREQuency:GATE:TIME')) return formatScpiNumber(this.gate, 6);
      if (is('READ[:SCALar][:FREQuency]') || is('MEASure[:SCALar][:FREQuency]')) {
        return SimCounter.format(await this.measure());
      }
      if (is('FETCh[:SCALar][:FREQuency]')) {
        const r = this.measuring ? await this.measuring : this.last;
        if (!r) {
          this.pushError(-230, 'Data corrupt or stale');
          return null;
        }
        return SimCounter.format(r);
      }
      this.pushError(-113, 'Undefined header');
      return null;
    }
    if (is('*RST')) {
      this.gate = this.config.gate;
      this.last = null;
      return null;
    }
    if (is('*CLS')) {
      this.errors = [];
      return null;
    }
    if (is('*WAI')) {
      if (this.measuring) await this.measuring;
      return null;
    }
    if (is('CONFigure[:SCALar]:FREQuency')) return null;
    if (is('INITiate[:IMMediate]')) {
      if (!this.measuring) void this.measure();
      return null;
    }
    if (is('[SENSe]:FREQuency:GATE:TIME')) {
      const a = parseTimeArg(cmd.args);
      if (!a.ok) this.pushError(a.code, a.message);
      else if ('keyword' in a)
        this.gate = a.keyword === 'MIN' ? GATE_MIN : a.keyword === 'MAX' ? GATE_MAX : 1;
      else if (a.value < GATE_MIN || a.value > GATE_MAX) this.pushError(-222, 'Data out of range');
      else this.gate = a.value;
      return null;
    }
    this.pushError(-113, 'Undefined header');
    return null;
  }

  /** One gate: waits gate/accel of wall time, then yields the reading. */
  private measure(): Promise<CounterReading> {
    if (this.measuring) return this.measuring;
    const start = this.simNow();
    const waitMs = (this.gate * 1000) / this.config.accel;
    this.measuring = new Promise<CounterReading>((resolve) => {
      const handle = this.clock.setTimer(() => {
        this.timers.delete(handle);
        this.measuring = null;
        resolve(this.nextReading(start));
      }, waitMs);
      this.timers.add(handle);
    });
    return this.measuring;
  }

  private pushError(code: number, message: string): void {
    if (this.errors.length >= MAX_ERRORS) {
      this.errors[MAX_ERRORS - 1] = '-350,"Queue overflow"';
      return;
    }
    this.errors.push(`${code},"${message}"`);
  }

  private emitLine(text: string): void {
    if (this.stopped) return;
    const g = this.config.garble;
    if (g > 0 && this.garbleRng.uniform() < g) {
      this.onData(this.garbleLine(text + CRLF));
      return;
    }
    this.onData(this.enc.encode(text + CRLF));
  }

  /** Corrupts a line the ways a noisy serial line does: flipped bytes, a cut line, noise bytes. */
  private garbleLine(line: string): Uint8Array {
    const bytes = this.enc.encode(line);
    const r = this.garbleRng;
    const kind = Math.floor(r.uniform() * 3);
    if (kind === 0) {
      const n = 1 + Math.floor(r.uniform() * 3);
      for (let i = 0; i < n; i++)
        bytes[Math.floor(r.uniform() * (bytes.length - 2))] = 0x80 | (r.uint32() & 0x7f);
      return bytes;
    }
    if (kind === 1) return bytes.slice(0, 1 + Math.floor(r.uniform() * (bytes.length - 3)));
    const noise = Array.from({ length: 1 + Math.floor(r.uniform() * 4) }, () => r.uint32() & 0xff);
    const out = new Uint8Array(noise.length + bytes.length);
    out.set(noise);
    out.set(bytes, noise.length);
    return out;
  }
}
