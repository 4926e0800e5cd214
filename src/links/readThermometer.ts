/**
 * One reading of a bench thermometer over a link: send `MEAS:TEMP?`, take the first line that
 * parses as a temperature, close. The bench uses it to fill its ambient field from the simulated
 * thermometer (`/sim/thermometer`); any link in the Web Serial port shape works the same way.
 */
import { createLineFramer } from '../../shared/protocol/framing';
import type { SerialLink } from './SerialLink';
import { createSimulatorLink } from './simulatorLink';

/** A plausible bench ambient, °C, from one reply line (`+23.07`, `23.1 C`); null otherwise. */
export function parseTemperature(line: string): number | null {
  const m = /^\s*([+-]?\d+(?:\.\d+)?)\s*(?:°?\s*C)?\s*$/i.exec(line);
  if (!m) return null;
  const v = Number(m[1]);
  return Number.isFinite(v) && v >= -60 && v <= 150 ? v : null;
}

export async function readThermometer(link: SerialLink, timeoutMs = 5000): Promise<number> {
  await link.open({ baudRate: 9600 });
  const reader = link.readable!.getReader();
  const writer = link.writable!.getWriter();
  const framer = createLineFramer({ terminator: 'auto', maxLine: 128 });
  let timer: ReturnType<typeof setTimeout> | undefined;
  try {
    await writer.write(new TextEncoder().encode('MEAS:TEMP?\r\n'));
    const timeout = new Promise<never>((_, reject) => {
      timer = setTimeout(
        () => reject(new Error('The thermometer did not answer within 5 s.')),
        timeoutMs,
      );
    });
    for (;;) {
      const { value, done } = await Promise.race([reader.read(), timeout]);
      if (done) throw new Error('The thermometer closed the link without a reading.');
      for (const frame of framer.push(value)) {
        const t = parseTemperature(frame.text);
        if (t !== null) return t;
      }
    }
  } finally {
    clearTimeout(timer);
    // A read may still be pending after a timeout: cancelling ends it before the lock is released.
    await reader.cancel().catch(() => undefined);
    reader.releaseLock();
    writer.releaseLock();
    await link.close().catch(() => undefined);
  }
}

/** Reads the simulated bench thermometer of the app's own simulator hub. */
export function readSimulatedThermometer(): Promise<number> {
  return readThermometer(createSimulatorLink({ path: '/sim/thermometer' }));
}
