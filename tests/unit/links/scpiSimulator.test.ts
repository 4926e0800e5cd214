/** The SCPI loop against the real simulated counter over a real WebSocket. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { startHub } from '../simulators/startHub';
import {
  createSimulatorLink,
  type WebSocketConstructorLike,
} from '../../../src/links/simulatorLink';
import { openScpi, readLink } from '../../../src/links/linkReader';
import { linkPreset, parseScpiError, parseMeasurement } from '../../../shared/protocol/links';
import type { SerialLink } from '../../../src/links/SerialLink';

let hub: Awaited<ReturnType<typeof startHub>>;
beforeAll(async () => {
  hub = await startHub();
});
afterAll(async () => {
  await hub.stop();
});

async function counterLink(query: string): Promise<SerialLink> {
  const link = createSimulatorLink({
    url: `${hub.base}/sim/counter?${query}`,
    WebSocket: WebSocket as unknown as WebSocketConstructorLike,
  });
  await link.open({ baudRate: 115200 });
  return link;
}

describe('SCPI over the simulator link', () => {
  it('queries identity, gate time and the error queue', async () => {
    const link = await counterLink('seed=42&accel=100');
    const { client, release } = openScpi(link, linkPreset('scpi-counter'));
    expect(await client.query('*IDN?')).toBe('Driftbench Labs,SIM-CNT-1,SN00042,1.0.0');
    await client.send(':SENS:FREQ:GATE:TIME 0.5');
    expect(Number(await client.query(':SENS:FREQ:GATE:TIME?'))).toBe(0.5);
    await client.send(':NOPE:NOT:HERE');
    expect(parseScpiError(await client.query(':SYST:ERR?'))).toEqual({
      code: -113,
      message: 'Undefined header',
    });
    expect(parseScpiError(await client.query(':SYST:ERR?'))).toEqual({
      code: 0,
      message: 'No error',
    });
    await release();
    await link.close();
  });

  it('reads READ? values near the configured frequency, one gate each (accelerated)', async () => {
    // 16 MHz + 3 ppm offset; gate 1 s at 200× → each READ? takes 5 ms of wall time.
    const link = await counterLink('nominal=16e6&offsetPpm=3&wfm=1e-10&accel=200&seed=3&garble=0');
    const { client, release } = openScpi(link, linkPreset('scpi-counter'));
    const t0 = performance.now();
    for (let i = 0; i < 5; i++) {
      const r = parseMeasurement(await client.query('READ?'), { quantity: 'frequency' });
      expect(r.ok && Math.abs(r.value / 16e6 - 1 - 3e-6)).toBeLessThan(1e-8);
    }
    expect(performance.now() - t0).toBeGreaterThanOrEqual(5 * 5 - 2);
    await release();
    await link.close();
  });

  it('polls through the link reader and survives garbled replies', async () => {
    const link = await counterLink('nominal=16e6&offsetPpm=3&accel=500&seed=8&garble=0.2');
    const profile = { ...linkPreset('scpi-counter'), timeoutMs: 200 };
    const issues: string[] = [];
    const ac = new AbortController();
    const values: number[] = [];
    for await (const r of readLink(link, {
      profile,
      signal: ac.signal,
      onIssue: (i) => issues.push(i.kind),
    })) {
      expect(r.seq).toBe(values.length);
      values.push(r.value);
      if (values.length === 30) ac.abort();
    }
    expect(values).toHaveLength(30);
    for (const v of values) expect(Math.abs(v / 16e6 - 1 - 3e-6)).toBeLessThan(1e-7);
    expect(issues.length).toBeGreaterThan(0); // 20 % garble: some replies were retried
    await link.close();
  });
});
