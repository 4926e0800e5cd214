import { describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { useDemoServer } from '../helpers/demoServer.js';
import { ServerMessage } from '../../shared/protocol/live.js';
import { socketProtocols, WS_PROTOCOL } from '../../shared/protocol/socketAuth.js';
import { SIM_MAX_FRAME } from '../../simulators/server.js';

const demo = useDemoServer({ simulators: true });
const { login } = demo;

function api(token: string, method: string, path: string, body?: unknown): Promise<any> {
  return fetch(`${demo.server.url}${path}`, {
    method,
    headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` },
    body: body === undefined ? undefined : JSON.stringify(body),
  }).then((r) => r.json());
}

function connect(token: string): Promise<{
  ws: WebSocket;
  messages: ServerMessage[];
  next(type: string): Promise<ServerMessage>;
}> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(`${demo.server.url.replace('http', 'ws')}/ws`, socketProtocols(token));
    const messages: ServerMessage[] = [];
    const waiters: Array<{ type: string; resolve: (m: ServerMessage) => void }> = [];
    ws.on('message', (data) => {
      const msg = JSON.parse(String(data)) as ServerMessage;
      messages.push(msg);
      const i = waiters.findIndex((w) => w.type === msg.type);
      if (i >= 0) waiters.splice(i, 1)[0].resolve(msg);
    });
    ws.on('error', reject);
    const next = (type: string) =>
      new Promise<ServerMessage>((res, rej) => {
        waiters.push({ type, resolve: res });
        setTimeout(() => rej(new Error(`no ${type} message`)), 5000);
      });
    const hello = next('hello');
    ws.on('open', () => hello.then(() => resolve({ ws, messages, next }), reject));
  });
}

describe('live watching', () => {
  it('sends a watcher the readings that another client ingests', async () => {
    const tech = await login('technician');
    const viewer = await login('viewer');
    const study = await api(tech, 'GET', '/api/studies/1');
    const capture = await api(tech, 'POST', '/api/captures', {
      dutId: study.duts[0].id,
      checkpointId: study.checkpoints[0].id,
      quantity: 'frequency',
      unit: 'Hz',
      gateTime: 0.1,
    });
    const watcher = await connect(viewer);
    watcher.ws.send(JSON.stringify({ type: 'watch', captureId: capture.id }));
    await new Promise((r) => setTimeout(r, 100));

    const batch = [0, 1, 2].map((seq) => ({ seq, t: seq * 0.1, value: 16e6 + seq }));
    const got = watcher.next('readings-batch');
    await api(tech, 'POST', `/api/captures/${capture.id}/readings`, { readings: batch });
    const msg = (await got) as Extract<ServerMessage, { type: 'readings-batch' }>;
    expect(msg.captureId).toBe(capture.id);
    expect(msg.readings).toEqual(batch.map((r) => ({ ...r, flags: 0 })));

    // A resent batch is not sent to watchers again; only the new reading is.
    const second = watcher.next('readings-batch');
    await api(tech, 'POST', `/api/captures/${capture.id}/readings`, {
      readings: [...batch, { seq: 3, t: 0.3, value: 16e6 + 3 }],
    });
    expect(
      ((await second) as Extract<ServerMessage, { type: 'readings-batch' }>).readings.map(
        (r) => r.seq,
      ),
    ).toEqual([3]);

    const state = watcher.next('capture-state');
    await api(tech, 'POST', `/api/captures/${capture.id}/finish`);
    expect(await state).toMatchObject({
      type: 'capture-state',
      captureId: capture.id,
      state: 'finished',
    });
    watcher.ws.close();
  });

  it('refuses a WebSocket without a valid token', async () => {
    const ws = new WebSocket(
      `${demo.server.url.replace('http', 'ws')}/ws`,
      socketProtocols('bogus'),
    );
    const status = await new Promise<number>((resolve) =>
      ws.on('unexpected-response', (_req, res) => resolve(res.statusCode ?? 0)),
    );
    expect(status).toBe(401);
  });

  it('takes the token from the subprotocol header only: a token in the URL is refused, and the answer never echoes it', async () => {
    const token = await login('viewer');
    const inUrl = new WebSocket(`${demo.server.url.replace('http', 'ws')}/ws?token=${token}`);
    const status = await new Promise<number>((resolve) =>
      inUrl.on('unexpected-response', (_req, res) => resolve(res.statusCode ?? 0)),
    );
    expect(status).toBe(401);
    const peer = await connect(token);
    expect(peer.ws.protocol).toBe(WS_PROTOCOL);
    peer.ws.close();
  });

  it('ends a watching socket when its user signs out (token version)', async () => {
    const token = await login('engineer');
    const peer = await connect(token);
    const closed = new Promise<number>((resolve) => peer.ws.on('close', (code) => resolve(code)));
    await fetch(`${demo.server.url}/api/auth/logout`, {
      method: 'POST',
      headers: { authorization: `Bearer ${token}` },
    });
    await demo.server.hub.recheckSessions();
    expect(await closed).toBe(4401);
  });

  it('opens the simulators only for a signed-in session, and ends a socket that sends an oversized frame', async () => {
    const anonymous = new WebSocket(`${demo.server.url.replace('http', 'ws')}/sim/counter`);
    const status = await new Promise<number>((resolve) =>
      anonymous.on('unexpected-response', (_req, res) => resolve(res.statusCode ?? 0)),
    );
    expect(status).toBe(401);
    const token = await login('technician');
    const sim = new WebSocket(
      `${demo.server.url.replace('http', 'ws')}/sim/counter?mode=talk`,
      socketProtocols(token),
    );
    await new Promise((resolve, reject) => {
      sim.on('open', resolve);
      sim.on('error', reject);
    });
    const closed = new Promise<number>((resolve) => sim.on('close', (code) => resolve(code)));
    sim.on('error', () => {});
    sim.send(Buffer.alloc(SIM_MAX_FRAME + 1));
    expect(await closed).toBe(1009);
  });

  it('survives hostile messages: prototype names, garbage and oversized frames', async () => {
    const viewer = await login('viewer');
    const peer = await connect(viewer);
    peer.ws.send(JSON.stringify({ type: '__proto__' }));
    peer.ws.send(JSON.stringify({ type: 'constructor', captureId: 1 }));
    peer.ws.send('not json');
    peer.ws.send(JSON.stringify(null));
    const errors = await new Promise<ServerMessage[]>((resolve) =>
      setTimeout(() => resolve(peer.messages.filter((m) => m.type === 'error')), 300),
    );
    expect(errors).toHaveLength(4);
    const closed = new Promise<void>((resolve) => peer.ws.on('close', () => resolve()));
    peer.ws.send('x'.repeat(100 * 1024));
    await closed;
    const health = await fetch(`${demo.server.url}/api/health`);
    expect(health.status).toBe(200);
  });

  it('answers a message outside the contract with an error naming the field, and keeps the socket', async () => {
    const peer = await connect(await login('viewer'));
    const refused = peer.next('error');
    peer.ws.send(JSON.stringify({ type: 'watch', captureId: 'seven' }));
    expect(await refused).toMatchObject({ type: 'error', code: 'bad-message' });
    expect(((await refused) as { message: string }).message).toContain('captureId');
    const unknown = peer.next('error');
    peer.ws.send(JSON.stringify({ type: 'shout' }));
    expect(await unknown).toMatchObject({ type: 'error', code: 'unknown-type' });
    // Still open: a ping in the contract is answered, and every message received was in the contract.
    const pong = peer.next('pong');
    peer.ws.send(JSON.stringify({ type: 'ping', id: 4 }));
    expect(await pong).toEqual({ type: 'pong', id: 4 });
    for (const m of peer.messages) expect(ServerMessage.safeParse(m).success).toBe(true);
    peer.ws.close();
  });

  it("closes a watcher's socket once the account is deactivated", async () => {
    const admin = await login('admin');
    const engineer = await login('engineer');
    const peer = await connect(engineer);
    const users = (await api(admin, 'GET', '/api/users')).users as Array<{
      id: number;
      role: string;
    }>;
    const id = users.find((u) => u.role === 'engineer')!.id;
    await api(admin, 'PATCH', `/api/users/${id}`, { active: false });
    const code = new Promise<number>((resolve) => peer.ws.on('close', (c) => resolve(c)));
    await demo.server.hub.recheckSessions();
    expect(await code).toBe(4401);
    await api(admin, 'PATCH', `/api/users/${id}`, { active: true });
  });
});
