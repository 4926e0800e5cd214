/** The simulator link (WebSocket, `ws` in Node) feeding the link reader. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { startHub } from '../simulators/startHub';
import {
  createSimulatorLink,
  simulatorUrl,
  type WebSocketConstructorLike,
} from '../../../src/links/simulatorLink';
import { readLink } from '../../../src/links/linkReader';
import { linkPreset, LinkProfile } from '../../../shared/protocol/links';
import type { LinkReading } from '../../../shared/protocol/reading';

const WS = WebSocket as unknown as WebSocketConstructorLike;
let hub: Awaited<ReturnType<typeof startHub>>;
beforeAll(async () => {
  hub = await startHub();
});
afterAll(async () => {
  await hub.stop();
});

async function collect(
  gen: AsyncGenerator<LinkReading>,
  n: number,
  ac: AbortController,
): Promise<LinkReading[]> {
  const out: LinkReading[] = [];
  for await (const r of gen) {
    out.push(r);
    if (out.length === n) ac.abort();
  }
  return out;
}

describe('simulator link', () => {
  it('builds the hub URL from the page origin', () => {
    expect(
      simulatorUrl('/sim/counter', { mode: 'talk', gate: 0.1 }, 'https://lab.example:8443'),
    ).toBe('wss://lab.example:8443/sim/counter?mode=talk&gate=0.1');
    expect(simulatorUrl('/sim/spi-bridge', {}, 'http://127.0.0.1:5173')).toBe(
      'ws://127.0.0.1:5173/sim/spi-bridge',
    );
  });

  it('streams talk-only readings through the link reader with seq numbers and timestamps', async () => {
    const link = createSimulatorLink({
      url: `${hub.base}/sim/counter?mode=talk&preset=tf-32k&checkpoint=2&gate=0.1&accel=20&garble=0`,
      WebSocket: WS,
    });
    await link.open({ baudRate: 9600 });
    expect(link.kind).toBe('simulator');
    expect(link.getInfo().simulatorUrl).toContain('/sim/counter');
    const ac = new AbortController();
    const readings = await collect(
      readLink(link, { profile: linkPreset('talk-counter'), signal: ac.signal }),
      20,
      ac,
    );
    expect(readings.map((r) => r.seq)).toEqual(Array.from({ length: 20 }, (_, i) => i));
    for (let i = 1; i < readings.length; i++)
      expect(readings[i].t).toBeGreaterThanOrEqual(readings[i - 1].t);
    // tf-32k after over-exposure: +6.5 + 2.5 ppm offset, about −0.14 ppm from the parabola.
    for (const r of readings)
      expect(Math.abs((r.value / 32768 - 1) * 1e6 - 8.86)).toBeLessThan(0.2);
    // The reader released the link's streams: it can be closed cleanly.
    await link.close();
    expect(link.readable).toBeNull();
  });

  it('reads the accelerometer through the SPI bridge profile', async () => {
    const profile = linkPreset('spi-bridge');
    const link = createSimulatorLink({
      url: `${hub.base}/sim/spi-bridge?orientation=inverted&noise=0.5`,
      WebSocket: WS,
    });
    await link.open({ baudRate: 115200 });
    const ac = new AbortController();
    const readings = await collect(
      readLink(link, { profile: { ...profile, intervalMs: 0 }, signal: ac.signal }),
      10,
      ac,
    );
    // Inverted: −1 g on Z, with the preset's +0.4 % sensitivity error and +6.1 mg bias.
    for (const r of readings) expect(Math.abs(r.value - (-1004 + 6.1))).toBeLessThan(5);
    await link.close();
  });

  it('is closed with code 1008 and the reason when the parameters are bad', async () => {
    const dropped = async (query: string) => {
      const link = createSimulatorLink({ url: `${hub.base}/sim/counter?${query}`, WebSocket: WS });
      const why = new Promise<string>((resolve) => (link.ondisconnect = resolve));
      // The hub accepts the upgrade, then closes: usually after open (ondisconnect), but the
      // close may also win the race (open rejects). Either way the reason reaches the caller.
      return link.open({ baudRate: 9600 }).then(
        () => why,
        (e: Error) => e.message,
      );
    };
    expect(await dropped('gate=1000')).toMatch(/bad counter parameters: gate: .*\(code 1008\)$/);
    expect(await dropped('gaet=1')).toMatch(/unknown parameter gaet/);
    expect(await dropped('wfm=abc')).toMatch(/wfm: must be a number/);
  });

  it('reports a dropped simulator through ondisconnect and ends the reader', async () => {
    const local = await startHub();
    const link = createSimulatorLink({
      url: `${local.base}/sim/counter?mode=talk&gate=0.1&accel=10`,
      WebSocket: WS,
    });
    await link.open({ baudRate: 9600 });
    let why = '';
    link.ondisconnect = (r) => (why = r);
    const readings: LinkReading[] = [];
    const done = (async () => {
      for await (const r of readLink(link, { profile: linkPreset('talk-counter') }))
        readings.push(r);
    })();
    await new Promise((r) => setTimeout(r, 100));
    expect(local.hub.sessions).toBe(1);
    await local.stop();
    await done;
    expect(why).not.toBe('');
    expect(readings.length).toBeGreaterThan(0);
  });

  it('ends the device session when the socket closes', async () => {
    const link = createSimulatorLink({
      url: `${hub.base}/sim/counter?mode=talk&accel=10`,
      WebSocket: WS,
    });
    await link.open({ baudRate: 9600 });
    const before = hub.hub.sessions;
    await link.close();
    await new Promise((r) => setTimeout(r, 50));
    expect(hub.hub.sessions).toBe(before - 1);
  });

  it('leaves other paths to the main server', async () => {
    const res = await new Promise<{ code: number }>((resolve) => {
      const ws = new WebSocket(`${hub.base}/ws/live`);
      ws.on('error', () => resolve({ code: -1 }));
      ws.on('close', (code) => resolve({ code }));
    });
    expect(res.code).toBe(-1); // the test server destroyed the socket: the hub said "not mine"
  });
});

describe('link presets', () => {
  it('are valid link profiles', () => {
    for (const id of ['scpi-counter', 'talk-counter', 'spi-bridge'] as const) {
      expect(LinkProfile.safeParse(linkPreset(id)).success).toBe(true);
    }
  });

  it('refuse a query profile without a query command', () => {
    const p = { ...linkPreset('scpi-counter'), queryCommand: ' ' };
    expect(LinkProfile.safeParse(p).success).toBe(false);
  });
});
