import { describe, expect, it } from 'vitest';
import { ManualClock } from '../../../simulators/clock';
import {
  SimAccelerometer,
  ORIENTATIONS,
  REG,
  command,
  type AccelConfig,
  type OrientationName,
} from '../../../simulators/accelerometer';
import { SimSpiBridge } from '../../../simulators/spiBridge';
import { decodeHexLine, readInt16 } from '../../../shared/protocol/hex';
import { ACCEL_PRESET } from '../../../simulators/presets';

function rig(over: Partial<AccelConfig> = {}) {
  const clock = new ManualClock();
  const sensor = new SimAccelerometer(
    {
      orientation: { ...ORIENTATIONS.flat },
      noiseMg: ACCEL_PRESET.noiseMg,
      biasMg: { ...ACCEL_PRESET.biasMg },
      sensErrPct: { ...ACCEL_PRESET.sensErrPct },
      localGravity: 9.80665,
      biasStep: null,
      accel: 1,
      seed: 7,
      ...over,
    },
    clock,
  );
  const bridge = new SimSpiBridge(sensor);
  const ask = (line: string) => {
    let out = '';
    bridge.onData = (b) => (out += new TextDecoder().decode(b));
    bridge.write(new TextEncoder().encode(line));
    return out;
  };
  /** Mean X, Y, Z in g over n burst reads at the given digits per g. */
  const meanG = (n: number, perG = 16000) => {
    const sum = [0, 0, 0];
    for (let i = 0; i < n; i++) {
      const r = decodeHexLine(ask('23 00 00 00 00 00 00\n').trim()); // stream-read X1…Z0
      if (!r.ok) throw new Error(r.message);
      for (let a = 0; a < 3; a++) sum[a] += readInt16(r.bytes, 1 + 2 * a, true) / perG;
    }
    return sum.map((s) => s / n);
  };
  return { clock, sensor, bridge, ask, meanG };
}

describe('SPI bridge', () => {
  // Expected bytes: the DBX-3 map in simulators/README.md (command = register·4 + 2·read + stream).
  it('answers one MISO line per MOSI line, same length', () => {
    const { ask } = rig();
    expect(ask('02 00\n')).toBe('00 DB\n'); // PART; FLAGS 00 in the command slot (not running)
    expect(ask('03 00 00\r\n')).toBe('00 DB 03\n'); // PART, REV by streaming
    expect(ask('02 00 00\n')).toBe('00 DB DB\n'); // no stream: the same register again
  });

  it('builds command bytes from register, direction and stream', () => {
    expect(command(REG.X1, true, true)).toBe(0x23);
    expect(command(REG.Z1, true, true)).toBe(0x33);
    expect(command(REG.MODE, false, false)).toBe(0x10);
    expect(command(REG.FLAGS, true, false)).toBe(0x16);
  });

  it('answers refused lines with ERR and keeps going', () => {
    const { ask } = rig();
    expect(ask('0G 00\n')).toBe('ERR bad hex\n');
    expect(ask('\u0001\u00ff\n')).toBe('ERR bad hex\n');
    expect(ask(new Array(65).fill('00').join(' ') + '\n')).toMatch(/^ERR too long/);
    expect(ask('02 00\n')).toBe('00 DB\n');
    expect(ask('*idn?\n')).toMatch(/^Driftbench Labs,SIM-SPI-1,/);
  });

  it('writes MODE and MEMO, ignores writes to read-only registers', () => {
    const { ask } = rig();
    expect(ask('10 05\n')).toBe('00 00\n'); // MODE ← RUN | SPAN ±4 g; FLAGS was 00
    expect(ask('12 00\n')).toBe('01 05\n'); // read MODE; FLAGS 01: a fresh sample
    expect(ask('00 AA\n')).toBe('01 00\n'); // write to PART: ignored
    expect(ask('02 00\n')).toBe('01 DB\n');
    expect(ask('18 A5\n')).toBe('01 00\n'); // MEMO ← A5
    expect(ask('1A 00\n')).toBe('01 A5\n');
    ask('10 80\n'); // RESTART
    expect(ask('12 00\n')).toBe('00 00\n');
    expect(ask('1A 00\n')).toBe('00 00\n');
  });

  it('reads zeros while not running', () => {
    const { ask } = rig();
    expect(ask('23 00 00 00 00 00 00\n')).toBe('00 00 00 00 00 00 00\n');
  });

  it('answers the example exchanges of simulators/README.md', () => {
    const { ask } = rig({ noiseMg: 0 });
    expect(ask('10 01\n')).toBe('00 00\n');
    expect(ask('03 00 00\n')).toBe('01 DB 03\n');
    expect(ask('23 00 00 00 00 00 00\n')).toBe('01 00 43 FF D5 3F 22\n');
    expect(ask('33 00 00\n')).toBe('01 3F 22\n');
    expect(ask('16 00\n')).toBe('01 01\n');
  });
});

describe('simulated accelerometer', () => {
  // Expected readings: gravity along the named axis (the bench's tilt check: flat +1 g on Z,
  // on edge +1 g on X, inverted −1 g on Z), times (1 + sensitivity error), plus bias.
  // Tolerance: 400 samples with 1.2 mg rms noise give a mean with σ = 0.06 mg; quantisation at
  // 0.0625 mg/digit adds ≤ 0.03 mg; 0.5 mg is > 7σ.
  const b = ACCEL_PRESET.biasMg;
  const s = ACCEL_PRESET.sensErrPct;
  it.each<[OrientationName, [number, number, number]]>([
    ['flat', [b.x / 1000, b.y / 1000, 1 + s.z / 100 + b.z / 1000]],
    ['edge', [1 + s.x / 100 + b.x / 1000, b.y / 1000, b.z / 1000]],
    ['inverted', [b.x / 1000, b.y / 1000, -(1 + s.z / 100) + b.z / 1000]],
  ])('reads the expected g lying %s', (name, expected) => {
    const { ask, meanG } = rig({ orientation: { ...ORIENTATIONS[name] } });
    ask('10 01\n'); // MODE ← RUN, ±2 g
    const m = meanG(400);
    for (let a = 0; a < 3; a++) expect(Math.abs(m[a] - expected[a])).toBeLessThan(0.5e-3);
  });

  it('scales digits with the range: 8000 digits/g at ±4 g, 4000 at ±8 g', () => {
    const { ask, meanG } = rig({ noiseMg: 0 });
    ask('10 05\n'); // RUN, SPAN 01 (±4 g)
    expect(meanG(1, 8000)[2]).toBeCloseTo(1 + s.z / 100 + b.z / 1000, 3);
    ask('10 09\n'); // RUN, SPAN 10 (±8 g)
    expect(meanG(1, 4000)[2]).toBeCloseTo(1 + s.z / 100 + b.z / 1000, 3);
  });

  it('clips at full scale and flags it in FLAGS', () => {
    const { ask } = rig({ noiseMg: 0, biasMg: { x: 0, y: 0, z: 1500 } });
    ask('10 01\n');
    expect(ask('33 00 00\n')).toBe('03 7F FF\n'); // +32767, FLAGS FRESH | CLIPPED
    expect(ask('16 00\n')).toBe('03 03\n');
  });

  it('shifts its bias after the exposure time of the scenario', () => {
    const { ask, meanG, clock } = rig({
      noiseMg: 0,
      biasStep: { mg: { x: 0, y: 0, z: 25 }, afterS: 60 },
    });
    ask('10 01\n');
    const before = meanG(1)[2];
    clock.advance(61_000);
    expect(meanG(1)[2] - before).toBeCloseTo(0.025, 4);
  });
});
