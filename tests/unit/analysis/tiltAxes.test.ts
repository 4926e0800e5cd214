import { describe, expect, it, test } from 'vitest';
import {
  axisOrientation,
  recordedOrientation,
  tiltCheckAxis,
  zOrientation,
  type SensingAxis,
  type StaticOrientation,
} from '../../../shared/analysis';
import { SPI_AXIS_QUERY, spiAxisOf } from '../../../shared/protocol/accelerometer';
import { linkPreset } from '../../../shared/protocol/linkProfile';
import { ManualClock } from '../../../simulators/clock';
import { ORIENTATIONS, SimAccelerometer } from '../../../simulators/accelerometer';
import { SimSpiBridge } from '../../../simulators/spiBridge';
import { decodeHexLine, readInt16 } from '../../../shared/protocol/hex';
import { buildProfile, simOrientation } from '../../../src/utils/benchPlanning';

describe('the static orientation of an axis for a recorded orientation', () => {
  // The tilt geometry: the axis pointing up reads +1 g, down −1 g, any other axis up or down
  // leaves it level (common practice, no source). flat/inverted/on-edge are Z's legacy names.
  test.each([
    ['x', 'x-up', 'flat'],
    ['x', 'x-down', 'inverted'],
    ['x', 'z-up', 'on-edge'],
    ['x', 'flat', 'on-edge'],
    ['x', 'y-down', 'on-edge'],
    ['x', 'on-edge', null], // which axis was up is not recorded
    ['y', 'y-up', 'flat'],
    ['y', 'y-down', 'inverted'],
    ['y', 'inverted', 'on-edge'],
    ['z', 'z-up', 'flat'],
    ['z', 'flat', 'flat'],
    ['z', 'inverted', 'inverted'],
    ['z', 'on-edge', 'on-edge'],
    ['z', 'x-down', 'on-edge'],
    ['y', 'other', null],
    ['z', null, null],
  ] as const)('%s axis, recorded %s → %s', (axis, recorded, expected) => {
    expect(axisOrientation(axis, recorded)).toBe(expected);
  });

  it('keeps zOrientation as the Z case', () => {
    for (const r of ['flat', 'z-down', 'on-edge', 'y-up', 'other', null])
      expect(zOrientation(r)).toBe(axisOrientation('z', r));
  });

  test.each(['x', 'y', 'z'] as const)(
    'records each pose of a %s check so that it maps back',
    (axis) => {
      for (const pose of ['flat', 'on-edge', 'inverted'] as const)
        expect(axisOrientation(axis, recordedOrientation(axis, pose))).toBe(pose);
    },
  );
});

describe('the poll line of each axis', () => {
  // DBX-3 (DEVELOPERS.md): command = register·4 + read 2 + stream 1; X1 0x08, Y1 0x0A, Z1 0x0C.
  test.each([
    ['x', '23 00 00'],
    ['y', '2B 00 00'],
    ['z', '33 00 00'],
  ] as const)('%s is read with %s', (axis, line) => {
    expect(SPI_AXIS_QUERY[axis]).toBe(line);
    expect(spiAxisOf({ parseRule: 'hex-spi', queryCommand: line })).toBe(axis);
  });

  it('names no axis for a counter or an unknown register', () => {
    expect(spiAxisOf({ parseRule: 'number', queryCommand: 'READ?' })).toBeNull();
    expect(spiAxisOf({ parseRule: 'hex-spi', queryCommand: '02 00' })).toBeNull();
    expect(spiAxisOf(null)).toBeNull();
    expect(spiAxisOf(linkPreset('spi-bridge'))).toBe('z');
  });

  it("builds the simulated bench's profile for the chosen axis and pose", () => {
    const base = {
      linkKind: 'simulator' as const,
      presetId: 'spi-bridge' as const,
      mode: 'query' as const,
      gateTime: 0.1,
      accelerometer: true,
      simulatorPreset: 'accel' as const,
      checkpointIndex: 0,
      acceleration: 10,
    };
    const x = buildProfile({ ...base, axis: 'x', orientation: 'inverted' });
    expect(x.queryCommand).toBe('23 00 00');
    expect(x.simulator!.params.orientation).toBe('x-down');
    const z = buildProfile({ ...base, orientation: 'on-edge' });
    expect(z.queryCommand).toBe('33 00 00');
    expect(z.simulator!.params.orientation).toBe('edge');
    expect(simOrientation('y', 'on-edge')).toBe('z-up');
  });
});

describe("a simulated sensor's X axis through the bench's poll line", () => {
  // The simulator's own parameters are the expected values: X offset +4.2 mg, sensitivity error
  // +0.3 % (an invented part), no noise, g = g_n so the ideal reading is 1000 mg.
  const PART = { biasX: 4.2, sensX: 0.3 };

  function readAxis(axis: SensingAxis, pose: StaticOrientation, n: number) {
    const sensor = new SimAccelerometer(
      {
        orientation: { ...ORIENTATIONS[simOrientation(axis, pose) as keyof typeof ORIENTATIONS] },
        noiseMg: 0,
        biasMg: { x: PART.biasX, y: -2.7, z: 6.1 },
        sensErrPct: { x: PART.sensX, y: -0.2, z: 0.4 },
        localGravity: 9.80665,
        biasStep: null,
        accel: 1,
        seed: 3,
      },
      new ManualClock(),
    );
    const bridge = new SimSpiBridge(sensor);
    const ask = (line: string) => {
      let out = '';
      bridge.onData = (b) => (out += new TextDecoder().decode(b));
      bridge.write(new TextEncoder().encode(`${line}\n`));
      return out;
    };
    ask('10 01'); // MODE ← RUN at ±2 g
    const values: number[] = [];
    for (let i = 0; i < n; i++) {
      const r = decodeHexLine(ask(SPI_AXIS_QUERY[axis]).trim());
      if (!r.ok) throw new Error(r.message);
      values.push(readInt16(r.bytes, 1, true) * 0.0625); // 0.0625 mg per digit at ±2 g
    }
    const mean = values.reduce((a, b) => a + b, 0) / n;
    const sd = Math.sqrt(values.reduce((a, b) => a + (b - mean) ** 2, 0) / (n - 1));
    return { n, mean, sd };
  }

  it('gives back its offset and sensitivity from the X-up and X-down poses', () => {
    const r = tiltCheckAxis({
      flat: readAxis('x', 'flat', 20),
      inverted: readAxis('x', 'inverted', 20),
      onEdge: readAxis('x', 'on-edge', 20),
      lsbMg: 0.0625,
      orientationErrorDeg: 1,
    });
    // Within one LSB's rounding (0.0625 mg) of the simulator's parameters.
    expect(Math.abs(r.offsetMg - PART.biasX)).toBeLessThan(0.0625);
    expect(Math.abs(r.sensitivityErrorPct - PART.sensX)).toBeLessThan(0.01);
    // Level (board flat), X reads its offset alone.
    expect(Math.abs(r.onEdgeOffset!.mean - PART.biasX)).toBeLessThan(0.0625);
  });

  it('reads Z, not X, with the Z poll line in the same pose', () => {
    // X up: Z is level and reads its own offset, +6.1 mg (the simulator's parameter).
    expect(Math.abs(readAxis('z', 'on-edge', 5).mean - 6.1)).toBeLessThan(0.0625);
  });
});
