import { describe, expect, it } from 'vitest';
import { ManualClock } from '../../../simulators/clock';
import { SimThermometer, THERMOMETER_IDN } from '../../../simulators/thermometer';

function session() {
  const clock = new ManualClock();
  const t = new SimThermometer(clock);
  const out: string[] = [];
  const dec = new TextDecoder();
  t.onData = (b) => out.push(dec.decode(b));
  const ask = (line: string) => t.write(new TextEncoder().encode(line));
  return { clock, out, ask };
}

describe('the simulated bench thermometer', () => {
  it('answers its identity and an unknown command on the serial line, CR LF terminated', () => {
    const { out, ask } = session();
    ask('*IDN?\n');
    ask('FOO\r\n');
    expect(out).toEqual([`${THERMOMETER_IDN}\r\n`, 'ERR unknown command\r\n']);
  });

  // The swing is 23 °C + 0.2 °C · sin(2πt / 1200 s) (simulators/oscillator.ts DEFAULT_AMBIENT):
  // 23.00 at t = 0, 23.20 at a quarter period (300 s), 22.80 at three quarters (900 s). Common practice, no source.
  it.each([
    [0, '+23.00'],
    [300, '+23.20'],
    [900, '+22.80'],
  ])('reads the ambient swing at %i s as %s °C', (seconds, expected) => {
    const { clock, out, ask } = session();
    clock.advance(seconds * 1000);
    ask('MEAS:TEMP?\r');
    expect(out).toEqual([`${expected}\r\n`]);
  });
});
