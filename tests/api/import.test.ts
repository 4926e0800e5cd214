import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { millionRowFile } from '../helpers/importFiles.js';
import { useDemoApp } from '../helpers/demoApp.js';

const demo = useDemoApp();
const { auth } = demo;

/** Posts a file with the fields first, as the import page does. */
async function importFile(
  text: string,
  fields: Record<string, string | number>,
  role = 'technician',
  name = 'log.csv',
) {
  let req = request(demo.t.app)
    .post('/api/captures/import')
    .set(await auth(role));
  for (const [k, v] of Object.entries({
    dutId: demo.ids.crystal.id,
    checkpointId: demo.ids.checkpoints[0],
    gateTime: 1,
    ...fields,
  }))
    req = req.field(k, String(v));
  return req.attach('file', Buffer.from(text, 'utf8'), { filename: name, contentType: 'text/csv' });
}

async function captureCount(): Promise<number> {
  const { rows } = await demo.t.db.pool.query<{ n: number }>(
    'SELECT count(*)::int AS n FROM captures',
  );
  return rows[0].n;
}

async function readingsOf(id: number) {
  const res = await request(demo.t.app)
    .get(`/api/captures/${id}/readings?maxPoints=100000`)
    .set(await auth('viewer'));
  return res.body.readings as Array<{ seq: number; t: number; value: number }>;
}

describe('importing readings logged elsewhere', () => {
  it('imports a CSV with a metadata header block, ISO 8601 times and values with units in the cell, and seals it on finish', async () => {
    const file = [
      'Logger: bench counter export',
      'Operator: night shift',
      '# gate 1 s',
      '',
      'time,frequency',
      '2026-11-02T09:15:00.250Z,16000000.012',
      '2026-11-02T09:15:01.250Z,16.000000014 MHz',
      '2026-11-02T09:15:02.250Z,16000.000016 kHz',
      '2026-11-02T09:15:03.750Z,16000000.018 Hz',
      '',
    ].join('\n');
    const res = await importFile(file, {
      timeFormat: 'iso8601',
      timeColumn: 'time',
      valueColumn: 'frequency',
    });
    expect(res.status).toBe(201);
    expect(res.body).toEqual({ id: expect.any(Number), readings: 4 });
    const cap = await request(demo.t.app)
      .get(`/api/captures/${res.body.id}`)
      .set(await auth('viewer'));
    expect(cap.body.state).toBe('finished');
    expect(cap.body.readingCount).toBe(4);
    expect(cap.body.sealSha256).toMatch(/^[0-9a-f]{64}$/);
    expect(cap.body.tags).toContain('imported');
    // The absolute start is the first reading's time stamp (from the file itself).
    expect(new Date(cap.body.startedAt).toISOString()).toBe('2026-11-02T09:15:00.250Z');
    const rows = await readingsOf(res.body.id);
    // Times: seconds after the first stamp; values: MHz and kHz taken to Hz (the file's own figures).
    expect(rows.map((r) => r.t)).toEqual([0, 1, 2, 3.5]);
    expect(rows.map((r) => r.value)).toEqual(
      [16000000.012, 16000000.014, 16000000.016, 16000000.018].map((x) => expect.closeTo(x, 6)),
    );
  });

  it('imports a TSV with decimal commas, HH:MM:SS.fff times over midnight and columns chosen by position', async () => {
    const file = [
      'index\tclock\treading',
      '1\t23:59:59,000\t16000000,5',
      '2\t23:59:59,500\t16000000,25',
      '3\t00:00:00,500\t16 000 000,125',
      '',
    ].join('\n');
    const res = await importFile(
      file,
      { timeFormat: 'hms', timeColumn: 2, valueColumn: 3, decimalSeparator: ',', delimiter: 'tab' },
      'technician',
      'log.tsv',
    );
    expect(res.status).toBe(201);
    expect(res.body.readings).toBe(3);
    const rows = await readingsOf(res.body.id);
    // 23:59:59.0 → 00:00:00.5 is 1.5 s later (the clock passed midnight).
    expect(rows.map((r) => r.t)).toEqual([0, 0.5, 1.5]);
    expect(rows.map((r) => r.value)).toEqual([16000000.5, 16000000.25, 16000000.125]);
  });

  it('takes bare values in the unit given and times in seconds, or one reading per τ0 without a time column', async () => {
    const kHz = await importFile('0,16000.0000125\n10,16000.0000250\n20 s,16000.0000375\n', {
      unit: 'kHz',
      gateTime: 10,
    });
    expect(kHz.status).toBe(201);
    const rows = await readingsOf(kHz.body.id);
    expect(rows.map((r) => r.t)).toEqual([0, 10, 20]);
    expect(rows.map((r) => r.value)).toEqual(
      [16000000.0125, 16000000.025, 16000000.0375].map((x) => expect.closeTo(x, 6)),
    );
    const untimed = await importFile('16000000.1\n16000000.2\n16000000.3\n', {
      timeFormat: 'none',
      valueColumn: 1,
      gateTime: 2,
      deadTime: 0.5,
    });
    expect(untimed.status).toBe(201);
    expect((await readingsOf(untimed.body.id)).map((r) => r.t)).toEqual([0, 2.5, 5]);
  });

  const good = ['t,f', '0,16000000.01', '1,16000000.02'];
  it.each([
    ['a value that is not a number', [...good, '2,sixteen'], 4, '2 (f)', /not a number/],
    ['an unknown unit', [...good, '2,16000000.03 furlongs'], 4, '2 (f)', /unknown unit/],
    [
      'a unit of another quantity',
      [...good, '2,16 mg'],
      4,
      '2 (f)',
      /acceleration, expected frequency/,
    ],
    ['a missing value', [...good, '2'], 4, '2 (f)', /value is missing/],
    ['a time that is not a time', [...good, 'later,16000000.03'], 4, '1 (t)', /not a time/],
    ['a time running backwards', [...good, '0.5,16000000.03'], 4, '1 (t)', /runs backwards/],
    [
      'a bad line in the middle of many good ones',
      [
        ...good,
        ...Array.from({ length: 500 }, (_, i) => `${i + 2},16000000.0${i % 10}`),
        '502,16000000.03.5',
      ],
      504,
      '2 (f)',
      /unknown unit|not a number/,
    ],
  ])(
    'refuses %s with 400 naming the line and column, and stores nothing',
    async (_what, lines, line, column, reason) => {
      const before = await captureCount();
      const res = await importFile(lines.join('\n'), { timeColumn: 't', valueColumn: 'f' });
      expect(res.status).toBe(400);
      expect(res.body.error.details).toMatchObject({ line, column });
      expect(res.body.error.details.reason).toMatch(reason);
      expect(res.body.error.message).toContain(`line ${line}`);
      expect(await captureCount()).toBe(before);
    },
  );

  it('refuses a bad ISO time, a decimal point under a decimal comma, an unknown column and an empty file', async () => {
    const before = await captureCount();
    const iso = await importFile('2026-11-02T09:15:00Z,1.6e7\n2026-13-02T09:15:01Z,1.6e7\n', {
      timeFormat: 'iso8601',
    });
    expect(iso.status).toBe(400);
    expect(iso.body.error.details).toMatchObject({ line: 2, column: '1' });
    const comma = await importFile('0;16000000,5\n1;16000000.5\n', { decimalSeparator: ',' });
    expect(comma.status).toBe(400);
    expect(comma.body.error.details).toMatchObject({ line: 2, column: '2' });
    const column = await importFile('time,freq\n0,1.6e7\n', {
      valueColumn: 'frequency',
      timeColumn: 'time',
    });
    expect(column.status).toBe(400);
    expect(column.body.error.details.reason).toContain('the columns are "time", "freq"');
    const empty = await importFile('# nothing logged\n', {});
    expect(empty.status).toBe(400);
    expect(empty.body.error.details.reason).toMatch(/no readings/);
    expect(await captureCount()).toBe(before);
  });

  it('refuses a missing file, missing fields, a checkpoint of another study and a viewer', async () => {
    const noFile = await request(demo.t.app)
      .post('/api/captures/import')
      .set(await auth('technician'))
      .field('dutId', demo.ids.crystal.id)
      .field('checkpointId', demo.ids.checkpoints[0])
      .field('gateTime', 1);
    expect(noFile.status).toBe(400);
    expect(noFile.body.error.message).toMatch(/file/);
    const noGate = await request(demo.t.app)
      .post('/api/captures/import')
      .set(await auth('technician'))
      .field('dutId', demo.ids.crystal.id)
      .field('checkpointId', demo.ids.checkpoints[0])
      .attach('file', Buffer.from('0,1\n1,2\n'), 'x.csv');
    expect(noGate.status).toBe(400);
    expect(noGate.body.error.message).toMatch(/gateTime/);
    const json = await request(demo.t.app)
      .post('/api/captures/import')
      .set(await auth('technician'))
      .send({ dutId: 1 });
    expect(json.status).toBe(400);
    const viewer = await importFile('0,1.6e7\n1,1.6e7\n', {}, 'viewer');
    expect(viewer.status).toBe(403);
  });

  it('reports the server side of its progress under the key the client chose', async () => {
    const res = await importFile('0,16000000.1\n1,16000000.2\n', {
      progressKey: 'import-key-0001',
    });
    expect(res.status).toBe(201);
    const p = await request(demo.t.app)
      .get('/api/captures/import/progress/import-key-0001')
      .set(await auth('technician'));
    expect(p.body).toEqual({ phase: 'done', rows: 2, stored: 2 });
    // Another user does not see it: for them the key holds nothing.
    const other = await request(demo.t.app)
      .get('/api/captures/import/progress/import-key-0001')
      .set(await auth('engineer'));
    expect(other.body).toEqual({ phase: 'unknown', rows: 0, stored: 0 });
    const bad = await request(demo.t.app)
      .get('/api/captures/import/progress/x')
      .set(await auth('technician'));
    expect(bad.status).toBe(400);
  });

  it('refuses to import into an approved (locked) study', async () => {
    await demo.t.db.pool.query("UPDATE studies SET status = 'approved' WHERE id = $1", [
      demo.ids.studyId,
    ]);
    try {
      const before = await captureCount();
      const res = await importFile('0,16000000.1\n1,16000000.2\n', {});
      expect(res.status).toBe(409);
      expect(res.body.error.code).toBe('study-locked');
      expect(await captureCount()).toBe(before);
    } finally {
      await demo.t.db.pool.query("UPDATE studies SET status = 'running' WHERE id = $1", [
        demo.ids.studyId,
      ]);
    }
  });

  it('imports a 1,000,000-row file into one finished, sealed capture', async () => {
    const file = millionRowFile(1_000_000);
    const res = await importFile(file, { gateTime: 0.1 }, 'technician', 'million.csv');
    expect(res.status).toBe(201);
    expect(res.body.readings).toBe(1_000_000);
    const cap = await request(demo.t.app)
      .get(`/api/captures/${res.body.id}`)
      .set(await auth('viewer'));
    expect(cap.body.state).toBe('finished');
    expect(cap.body.readingCount).toBe(1_000_000);
    expect(cap.body.sealSha256).toMatch(/^[0-9a-f]{64}$/);
    const { rows } = await demo.t.db.pool.query<{ n: number; last: number }>(
      'SELECT count(*)::int AS n, max(t) AS last FROM readings WHERE capture_id = $1',
      [res.body.id],
    );
    // The generator writes t = i / 10 s for line i (common practice, no source).
    expect(rows[0]).toEqual({ n: 1_000_000, last: 99_999.9 });
  }, 180_000);
});
