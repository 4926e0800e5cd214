// The contract between client and server (shared/protocol): every route of the permission table
// has a response schema, the test-time response check turns a drifting answer into a failure, and
// the live socket's messages are parsed at both edges.
import { describe, expect, it } from 'vitest';
import express from 'express';
import request from 'supertest';
import { ROUTES } from '../../shared/protocol/roles.js';
import { RESPONSES } from '../../shared/protocol/responses.js';
import { ClientMessage, ServerMessage } from '../../shared/protocol/live.js';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { replyCsv, replyText, validateResponses } from '../../server/middleware/responses.js';
import { LiveSocket } from '../../src/api/socket.js';

describe('the response table', () => {
  it('names a response for every route of the permission table', () => {
    const missing = Object.keys(ROUTES).filter((key) => !(key in RESPONSES));
    expect(missing).toEqual([]);
  });

  it('names no route the permission table lacks', () => {
    const extra = Object.keys(RESPONSES).filter((key) => !(key in ROUTES));
    expect(extra).toEqual([]);
  });
});

/** A tiny app behind the response check, answering `body` on GET /api/dashboard. */
function appAnswering(status: number, body: unknown) {
  const app = express();
  const api = express.Router();
  api.use(validateResponses(true));
  api.get('/dashboard', (_req, res) => {
    res.status(status).json(body);
  });
  api.get('/studies/:id/captures.csv', (_req, res) => {
    res.type('text/csv').send('a,b\n1,2\n');
  });
  app.use('/api', api);
  return app;
}

const dashboard = {
  counts: {
    studies: 1,
    checkpoints: 3,
    duts: 4,
    instruments: 2,
    references: 1,
    captures: 0,
    users: 5,
  },
  calibration: [],
  live: [],
};

describe('the response check (tests only)', () => {
  it('lets an answer that matches its route schema through unchanged', async () => {
    const res = await request(appAnswering(200, { ...dashboard, extra: 'kept' })).get(
      '/api/dashboard',
    );
    expect(res.status).toBe(200);
    expect(res.body.extra).toBe('kept');
  });

  it('turns an answer missing a field into a 500 naming the route and the field', async () => {
    const { counts, ...rest } = dashboard;
    void counts;
    const res = await request(appAnswering(200, rest)).get('/api/dashboard');
    expect(res.status).toBe(500);
    expect(res.body.error.code).toBe('response-drift');
    expect(res.body.error.message).toContain('GET /api/dashboard');
    expect(res.body.error.message).toContain('counts');
  });

  it('turns a string id (the old `id: string | number`) into a drift', async () => {
    const body = {
      ...dashboard,
      calibration: [
        {
          subject: 'instrument',
          id: '3',
          name: 'Counter',
          kind: 'counter',
          calibrationDue: '2026-01-01',
          state: 'overdue',
          calibration: {
            state: 'overdue',
            daysLeft: -3,
            dueOn: '2026-01-01',
            awaySince: null,
            needsAttention: true,
          },
        },
      ],
    };
    const res = await request(appAnswering(200, body)).get('/api/dashboard');
    expect(res.status).toBe(500);
    expect(res.body.error.message).toContain('calibration.0.id');
  });

  it('checks an error answer against the error envelope', async () => {
    const good = await request(
      appAnswering(404, { error: { code: 'not-found', message: 'No such thing' } }),
    ).get('/api/dashboard');
    expect(good.status).toBe(404);
    const bad = await request(appAnswering(404, { message: 'No such thing' })).get(
      '/api/dashboard',
    );
    expect(bad.status).toBe(500);
    expect(bad.body.error.code).toBe('response-drift');
  });

  it('leaves a CSV answer alone', async () => {
    const res = await request(appAnswering(200, {})).get('/api/studies/1/captures.csv');
    expect(res.status).toBe(200);
    expect(res.text).toBe('a,b\n1,2\n');
  });

  it('is off unless asked for (production does not parse its own answers)', async () => {
    const app = express();
    const api = express.Router();
    api.use(validateResponses(false));
    api.get('/dashboard', (_req, res) => {
      res.json({ nothing: true });
    });
    app.use('/api', api);
    const res = await request(app).get('/api/dashboard');
    expect(res.status).toBe(200);
  });
});

describe('pre-serialised and CSV answers', () => {
  /** Routes answering pre-serialised text through replyText, and a CSV route through replyCsv. */
  function appSending(text: string) {
    const app = express();
    const api = express.Router();
    api.use(validateResponses(true));
    api.get('/captures/:id/analysis', (_req, res) => {
      replyText(res, 'GET /api/captures/:id/analysis', text);
    });
    api.get('/dashboard', (_req, res) => {
      replyText(res, 'GET /api/dashboard', text);
    });
    api.get('/studies/:id/captures.csv', (_req, res) => {
      replyCsv(res, 'GET /api/studies/:id/captures.csv', 'study-1.csv', 'id,state\n7,finished\n');
    });
    app.use('/api', api);
    return app;
  }

  it('checks worker text like any JSON answer: a drift becomes a 500 naming the field', async () => {
    const res = await request(appSending(JSON.stringify({ stats: 'none' }))).get(
      '/api/captures/3/analysis',
    );
    expect(res.status).toBe(500);
    expect(res.body.error.code).toBe('response-drift');
    expect(res.body.error.message).toContain('GET /api/captures/:id/analysis');
  });

  it('sends text that fits its schema as it is, typed JSON', async () => {
    const text = JSON.stringify(dashboard);
    const res = await request(appSending(text)).get('/api/dashboard');
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^application\/json/);
    expect(res.text).toBe(text);
  });

  it('sends a CSV with its type and the file name to save it under', async () => {
    const res = await request(appSending('{}')).get('/api/studies/1/captures.csv');
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    expect(res.headers['content-disposition']).toBe('attachment; filename="study-1.csv"');
    expect(res.text).toBe('id,state\n7,finished\n');
  });
});

describe('the route handlers', () => {
  it('answer JSON only through reply() or replyText(), never res.json / res.send', () => {
    const dir = fileURLToPath(new URL('../../server/routes/', import.meta.url));
    const bare = readdirSync(dir)
      .filter((f) => f.endsWith('.ts'))
      .flatMap((f) =>
        readFileSync(join(dir, f), 'utf8')
          .split('\n')
          .map((line, i) => ({ at: `${f}:${i + 1}`, line }))
          .filter(({ line }) => /\.(json|send|jsonp)\(/.test(line)),
      )
      .map(({ at, line }) => `${at} ${line.trim()}`);
    expect(bare).toEqual([]);
  });
});

describe('live socket messages', () => {
  it('accepts the three client messages and refuses anything else', () => {
    expect(ClientMessage.safeParse({ type: 'watch', captureId: 7 }).success).toBe(true);
    expect(ClientMessage.safeParse({ type: 'unwatch', captureId: 7 }).success).toBe(true);
    expect(ClientMessage.safeParse({ type: 'ping' }).success).toBe(true);
    expect(ClientMessage.safeParse({ type: 'watch', captureId: '7' }).success).toBe(false);
    expect(ClientMessage.safeParse({ type: 'watch', captureId: 1.5 }).success).toBe(false);
    expect(ClientMessage.safeParse({ type: 'watch', captureId: 7, extra: 1 }).success).toBe(false);
    expect(ClientMessage.safeParse({ type: 'shout' }).success).toBe(false);
  });

  it('accepts a readings batch and a stalled state, refuses a reading without a value', () => {
    const batch = {
      type: 'readings-batch',
      captureId: 3,
      readings: [{ seq: 0, t: 0, value: 1 }],
      sentAt: 1,
    };
    expect(ServerMessage.safeParse(batch).success).toBe(true);
    expect(
      ServerMessage.safeParse({ type: 'capture-state', captureId: 3, state: 'stalled' }).success,
    ).toBe(true);
    expect(ServerMessage.safeParse({ ...batch, readings: [{ seq: 0, t: 0 }] }).success).toBe(false);
    expect(
      ServerMessage.safeParse({ type: 'capture-state', captureId: 3, state: 'gone' }).success,
    ).toBe(false);
  });
});

/** A stand-in WebSocket the test drives by hand. */
class FakeSocket {
  static last: FakeSocket | null = null;
  readyState = 0;
  sent: string[] = [];
  onopen: (() => void) | null = null;
  onmessage: ((ev: { data: string }) => void) | null = null;
  onclose: (() => void) | null = null;
  constructor() {
    FakeSocket.last = this;
  }
  send(data: string) {
    this.sent.push(data);
  }
  close() {}
}

describe('the client socket', () => {
  it('hands on messages in the contract and drops the others, saying why', () => {
    const invalid: string[] = [];
    const socket = new LiveSocket({
      getToken: () => 'token',
      url: 'ws://localhost/ws',
      WebSocket: FakeSocket as unknown as typeof WebSocket,
      onInvalid: (problem) => invalid.push(problem),
    });
    const got: unknown[] = [];
    socket.watch(5, (m) => got.push(m));
    const ws = FakeSocket.last!;
    ws.readyState = 1;
    ws.onopen!();
    expect(ws.sent.map((s) => JSON.parse(s))).toEqual([{ type: 'watch', captureId: 5 }]);
    ws.onmessage!({
      data: JSON.stringify({ type: 'capture-state', captureId: 5, state: 'finished' }),
    });
    ws.onmessage!({
      data: JSON.stringify({ type: 'capture-state', captureId: 5, state: 'exploded' }),
    });
    ws.onmessage!({
      data: JSON.stringify({ type: 'readings-batch', captureId: 5, readings: 'many', sentAt: 1 }),
    });
    ws.onmessage!({ data: 'not json' });
    expect(got).toEqual([{ type: 'capture-state', captureId: 5, state: 'finished' }]);
    expect(invalid).toHaveLength(3);
    expect(invalid[0]).toContain('state');
    expect(invalid[1]).toContain('readings');
    socket.close();
  });
});
