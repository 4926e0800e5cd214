/**
 * Driftbench's simulated bench thermometer, byte-exact as on a serial line: SCPI-style queries
 * terminated by LF, CR or CR LF; replies end with CR LF.
 *
 *   *IDN?        → `Driftbench Labs,SIM-T-1`
 *   MEAS:TEMP?   → the ambient beside the board in °C with two decimals, e.g. `+23.07`
 *
 * The ambient follows the same slow air-conditioning swing the simulated oscillators feel
 * (`DEFAULT_AMBIENT`), read at the clock's time, so the bench can fill its ambient field from it.
 */
import { createLineFramer } from '../shared/protocol/framing';
import type { Clock } from './clock';
import { ambientC, DEFAULT_AMBIENT, type Ambient } from './oscillator';

export const THERMOMETER_IDN = 'Driftbench Labs,SIM-T-1';

export class SimThermometer {
  /** Receives every byte the thermometer sends on its TX line. */
  onData: (bytes: Uint8Array) => void = () => {};
  private readonly enc = new TextEncoder();
  private readonly framer = createLineFramer({ terminator: 'auto', maxLine: 128 });

  constructor(
    private readonly clock: Clock,
    private readonly ambient: Ambient = DEFAULT_AMBIENT,
  ) {}

  /** The ambient now, °C (simulated time = the clock's seconds). */
  reading(): number {
    return ambientC(this.ambient, this.clock.now() / 1000);
  }

  write(bytes: Uint8Array): void {
    for (const frame of this.framer.push(bytes)) {
      const command = frame.text.trim().toUpperCase();
      if (command === '') continue;
      if (command === '*IDN?') this.reply(THERMOMETER_IDN);
      else if (command === 'MEAS:TEMP?' || command === 'MEASURE:TEMPERATURE?') {
        const t = this.reading();
        this.reply(`${t >= 0 ? '+' : ''}${t.toFixed(2)}`);
      } else this.reply('ERR unknown command');
    }
  }

  stop(): void {}

  private reply(text: string): void {
    this.onData(this.enc.encode(`${text}\r\n`));
  }
}
