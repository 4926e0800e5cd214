import { describe, expect, it } from 'vitest';
import { ManualClock } from '../../../simulators/clock';
import { SimCounter, type CounterConfig } from '../../../simulators/counter';
import { DEFAULT_AMBIENT } from '../../../simulators/oscillator';

const dec = new TextDecoder();

function config(
  over: Partial<CounterConfig> = {},
  osc: Partial<CounterConfig['oscillator']> = {},
): CounterConfig {
  return {
    oscillator: {
      nominal: 16e6,
      offsetPpm: 1.5,
      noise: { wfm: 1e-9 },
      noiseTau: 1,
      agingPpbPerDay: 0,
      temperature: { kind: 'linear', ppmPerC: 0, refC: 23 },
      ambient: { ...DEFAULT_AMBIENT },
      scenario: { kind: 'none' },
      ...osc,
    },
    gate: 1,
    deadTime: 0,
    refOffset: 0,
    accel: 1,
    garble: 0,
    seed: 417,
    mode: 'query',
    ...over,
  };
}

function harness(cfg: CounterConfig) {
  const clock = new ManualClock();
  const counter = new SimCounter(cfg, clock);
  let out = '';
  counter.onData = (b) => (out += dec.decode(b));
  const send = async (text: string) => {
    counter.write(new TextEncoder().encode(text));
    await flush();
  };
  return {
    clock,
    counter,
    send,
    take() {
      const o = out;
      out = '';
      return o;
    },
  };
}

const flush = () => new Promise<void>((r) => setImmediate(r));
const READING = /^[+-]\d\.\d{12}E[+-]\d{2}\r\n$/;

describe('simulated counter, talk-only mode', () => {
  it('streams one reading per gate plus dead time, unasked, with CR LF', () => {
    const h = harness(config({ mode: 'talk', gate: 0.5, deadTime: 0.1 }));
    h.counter.start();
    h.clock.advance(599);
    expect(h.take()).toBe('');
    h.clock.advance(1);
    const first = h.take();
    expect(first).toMatch(READING);
    h.clock.advance(1200);
    const lines = h.take().split(/(?<=\r\n)/);
    expect(lines).toHaveLength(2);
    for (const l of lines) expect(l).toMatch(READING);
    h.counter.stop();
    h.clock.advance(10_000);
    expect(h.take()).toBe('');
    expect(h.clock.pending).toBe(0);
  });

  it('runs faster by the acceleration factor', () => {
    const h = harness(config({ mode: 'talk', accel: 100 }));
    h.counter.start();
    h.clock.advance(1000); // 1 s of wall time = 100 gates of 1 s
    expect(h.take().split('\r\n').filter(Boolean)).toHaveLength(100);
    h.counter.stop();
  });

  it('ignores whatever arrives on its RX line', async () => {
    const h = harness(config({ mode: 'talk' }));
    await h.send('*IDN?\n');
    expect(h.take()).toBe('');
  });
});

describe('simulated counter, SCPI query mode', () => {
  it('identifies itself with the fictional maker', async () => {
    const h = harness(config());
    await h.send('*IDN?\n');
    expect(h.take()).toBe('Driftbench Labs,SIM-CNT-1,SN00417,1.0.0\r\n');
  });

  it('sets and queries the gate time in short and long forms, any case', async () => {
    const h = harness(config());
    await h.send(':SENS:FREQ:GATE:TIME 0.1\r\n');
    await h.send('sense:frequency:gate:time?\n');
    expect(h.take()).toBe('+1.000000E-01\r\n');
    await h.send('FREQ:GATE:TIME 10 ms\r');
    await h.send(':SENS:FREQ:GATE:TIME?\n');
    expect(h.take()).toBe('+1.000000E-02\r\n');
    await h.send(':SYST:ERR?\n');
    expect(h.take()).toBe('0,"No error"\r\n');
  });

  it('queues SCPI errors for unknown headers and out-of-range values', async () => {
    const h = harness(config());
    await h.send(':FOO:BAR 1\n');
    await h.send(':SENS:FREQ:GATE:TIME 1000\n');
    await h.send(':SYST:ERR?;:SYST:ERR?;:SYST:ERR?\n');
    expect(h.take()).toBe('-113,"Undefined header";-222,"Data out of range";0,"No error"\r\n');
  });

  it('answers READ? only after one gate time', async () => {
    const h = harness(config({ gate: 2 }));
    await h.send('READ?\n');
    h.clock.advance(1999);
    await flush();
    expect(h.take()).toBe('');
    h.clock.advance(1);
    await h.counter.idle();
    expect(h.take()).toMatch(READING);
  });

  it('returns the last measurement on FETC? after INIT', async () => {
    const h = harness(config());
    await h.send(':FETC?\n');
    expect(h.take()).toBe('');
    await h.send(':INIT\n');
    await h.send(':FETC?\n');
    h.clock.advance(1000);
    await h.counter.idle();
    const a = h.take();
    await h.send(':FETC?\n');
    expect(h.take()).toBe(a);
    await h.send(':SYST:ERR?\n');
    expect(h.take()).toBe('-230,"Data corrupt or stale"\r\n');
  });

  it('displays f/(1 + y_ref) when its own timebase is fast by y_ref', () => {
    // docs/references.md, "Frequency counters": displayed = true/(1 + y_ref) (Driftbench's convention).
    const yRef = 2e-7;
    const c = new SimCounter(
      config({ refOffset: yRef }, { noise: {}, offsetPpm: 1 }),
      new ManualClock(),
    );
    const r = c.nextReading();
    expect(r.value).toBeCloseTo((16e6 * (1 + 1e-6)) / (1 + yRef), 6);
  });

  it('applies a step scenario after the given time', () => {
    const c = new SimCounter(
      config({}, { noise: {}, offsetPpm: 0, scenario: { kind: 'step', ppm: 2.5, afterS: 10 } }),
      new ManualClock(),
    );
    const ys = Array.from({ length: 20 }, () => c.nextReading().value / 16e6 - 1);
    expect(ys[5]).toBeCloseTo(0, 15);
    expect(ys[15]).toBeCloseTo(2.5e-6, 15);
  });

  it('garbles about the configured fraction of lines, and only those', () => {
    const h = harness(config({ mode: 'talk', accel: 1000, garble: 0.1 }));
    h.counter.start();
    h.clock.advance(2000); // 2000 readings
    h.counter.stop();
    const lines = h.take().split('\r\n');
    const good = lines.filter((l) => /^[+-]\d\.\d{12}E[+-]\d{2}$/.test(l)).length;
    // Binomial(2000, 0.9): mean 1800, sd 13.4; each garbled line may also damage one good
    // neighbour (a cut line glues onto the next), so allow 1800 − 2·200·… → a wide band.
    expect(good).toBeGreaterThan(1550);
    expect(good).toBeLessThan(1860);
  });
});
