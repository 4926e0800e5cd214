import { afterEach, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { startHub } from './startHub';

let stop: (() => Promise<void>) | null = null;
afterEach(async () => {
  await stop?.();
  stop = null;
});

function nextMessage(ws: WebSocket): Promise<{ data: Buffer; binary: boolean }> {
  return new Promise((resolve) =>
    ws.once('message', (data, binary) => resolve({ data: data as Buffer, binary })),
  );
}

describe('simulator hub', () => {
  it('accepts text frames and answers with the serial bytes as binary frames', async () => {
    const h = await startHub();
    stop = h.stop;
    const ws = new WebSocket(`${h.base}/sim/counter?seed=5`);
    await new Promise((r) => ws.once('open', r));
    const reply = nextMessage(ws);
    ws.send('*IDN?\n');
    const { data, binary } = await reply;
    expect(binary).toBe(true);
    expect(data.toString('latin1')).toBe('Driftbench Labs,SIM-CNT-1,SN00005,1.0.0\r\n');
    ws.close();
  });

  it('answers SPI lines split across frames, like bytes on a serial line', async () => {
    const h = await startHub();
    stop = h.stop;
    const ws = new WebSocket(`${h.base}/sim/spi-bridge`);
    await new Promise((r) => ws.once('open', r));
    const reply = nextMessage(ws);
    ws.send(Buffer.from('02 '));
    ws.send(Buffer.from('00\r\n'));
    expect((await reply).data.toString('latin1')).toBe('00 DB\n'); // PART (simulators/README.md)
    ws.close();
  });

  it('drops a peer that stops answering pings', async () => {
    const h = await startHub({ pingIntervalMs: 40 });
    stop = h.stop;
    const ws = new WebSocket(`${h.base}/sim/counter`, { autoPong: false });
    await new Promise((r) => ws.once('open', r));
    expect(h.hub.sessions).toBe(1);
    const code = await new Promise<number>((r) => ws.once('close', (c) => r(c)));
    expect(code).toBe(1006); // terminated, no close handshake
    await expect.poll(() => h.hub.sessions, { timeout: 1000 }).toBe(0);
  });

  it('keeps a peer that answers pings', async () => {
    const h = await startHub({ pingIntervalMs: 30 });
    stop = h.stop;
    const ws = new WebSocket(`${h.base}/sim/counter`);
    await new Promise((r) => ws.once('open', r));
    await new Promise((r) => setTimeout(r, 150));
    expect(ws.readyState).toBe(WebSocket.OPEN);
    expect(h.hub.sessions).toBe(1);
    ws.close();
  });
});
