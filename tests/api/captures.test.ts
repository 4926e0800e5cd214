import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { seeded } from '../helpers/demo.js';
import { useDemoApp } from '../helpers/demoApp.js';

const demo = useDemoApp({ ambientC: 23.1 });
const { auth, newCapture } = demo;

const reading = (seq: number, value = 16e6 + seq * 1e-3) => ({ seq, t: seq, value });

describe('ingest', () => {
  it('stores exactly the unique readings from batches with duplicates, reordering and gaps', async () => {
    const id = await newCapture();
    const post = async (readings: unknown[]) => demo.postReadings(id, readings);
    const a = await post([reading(0), reading(1), reading(2), reading(3)]);
    expect(a.body).toEqual({ accepted: 4, duplicates: 0, highestSeq: 3 });
    // Resent batch plus new readings, out of order, with seq 6 missing.
    const b = await post([reading(7), reading(2), reading(5), reading(3), reading(4), reading(5)]);
    expect(b.body).toEqual({ accepted: 3, duplicates: 3, highestSeq: 7 });
    const c = await post([reading(1)]);
    expect(c.body).toEqual({ accepted: 0, duplicates: 1, highestSeq: 7 });
    const all = await request(demo.t.app)
      .get(`/api/captures/${id}/readings`)
      .set(await auth('viewer'));
    expect(all.body.readings.map((r: { seq: number }) => r.seq)).toEqual([0, 1, 2, 3, 4, 5, 7]);
    expect(all.body.readings[4]).toEqual({ seq: 4, t: 4, value: 16e6 + 4e-3 });
  });

  it('refuses readings from a viewer with 403', async () => {
    const id = await newCapture();
    const res = await demo.postReadings(id, [reading(0)], 'viewer');
    expect(res.status).toBe(403);
  });

  it("refuses readings for someone else's capture unless the writer is a lead or admin", async () => {
    const id = await newCapture('engineer');
    const tech = await demo.postReadings(id, [reading(0)]);
    expect(tech.status).toBe(403);
    const lead = await demo.postReadings(id, [reading(0)], 'lead');
    expect(lead.status).toBe(200);
  });

  it('answers 404 for readings of a missing capture', async () => {
    const res = await request(demo.t.app)
      .post('/api/captures/999999/readings')
      .set(await auth('technician'))
      .send({ readings: [reading(0)] });
    expect(res.status).toBe(404);
  });

  it.each([
    [[reading(0), { t: 1, value: 1 }], 1, 'seq'],
    [[reading(0), reading(1), { seq: 2, t: 2, value: 'x' }], 2, 'value'],
    [[{ seq: -1, t: 0, value: 1 }], 0, 'seq'],
    [[{ seq: 0, t: null, value: 1 }], 0, 't'],
    [[reading(0), { seq: 1.5, t: 1, value: 1 }], 1, 'seq'],
  ])(
    'refuses a whole batch with a malformed reading and names its index (%#)',
    async (readings, index, field) => {
      const id = await newCapture();
      const res = await demo.postReadings(id, readings);
      expect(res.status).toBe(400);
      expect(res.body.error.details.index).toBe(index);
      expect(res.body.error.message).toContain(field);
      const stored = await request(demo.t.app)
        .get(`/api/captures/${id}/readings`)
        .set(await auth('viewer'));
      expect(stored.body.readings).toEqual([]);
    },
  );

  it('refuses a batch over the limit', async () => {
    const id = await newCapture();
    const readings = Array.from({ length: 20_001 }, (_, i) => reading(i));
    const res = await demo.postReadings(id, readings);
    expect(res.status).toBe(400);
  });

  it('refuses readings after finish, and the readings stay as they were', async () => {
    const id = await newCapture();
    await demo.postReadings(id, [reading(0), reading(1), reading(2)]);
    const fin = await request(demo.t.app)
      .post(`/api/captures/${id}/finish`)
      .set(await auth('technician'));
    expect(fin.status).toBe(200);
    expect(fin.body.state).toBe('finished');
    const late = await demo.postReadings(id, [reading(3)]);
    expect(late.status).toBe(409);
    expect(late.body.error.code).toBe('capture-finished');
    const again = await request(demo.t.app)
      .post(`/api/captures/${id}/finish`)
      .set(await auth('technician'));
    expect(again.status).toBe(200);
    const stored = await request(demo.t.app)
      .get(`/api/captures/${id}/readings`)
      .set(await auth('viewer'));
    expect(stored.body.readings).toHaveLength(3);
  });
});

describe('capture creation', () => {
  it('refuses a capture from a viewer', async () => {
    const res = await request(demo.t.app)
      .post('/api/captures')
      .set(await auth('viewer'))
      .send(demo.captureBody());
    expect(res.status).toBe(403);
  });

  it('names the bad field of a capture', async () => {
    const res = await request(demo.t.app)
      .post('/api/captures')
      .set(await auth('technician'))
      .send({
        dutId: demo.ids.crystal.id,
        checkpointId: demo.ids.checkpoints[0],
        quantity: 'smell',
        unit: 'Hz',
        gateTime: 0,
      });
    expect(res.status).toBe(400);
    const paths = res.body.error.details.map((d: { path: string }) => d.path);
    expect(paths).toEqual(expect.arrayContaining(['quantity', 'gateTime']));
  });

  it('copies the reference offset at capture time', async () => {
    const refs = await request(demo.t.app)
      .get('/api/references')
      .set(await auth('viewer'));
    const ref = refs.body.references[0];
    const id = await newCapture('technician', { referenceId: ref.id });
    const c = await request(demo.t.app)
      .get(`/api/captures/${id}`)
      .set(await auth('viewer'));
    expect(c.body.referenceOffset).toBe(ref.fractionalOffset);
    expect(c.body.study.title).toContain('ultrasonic');
  });
});

describe('analysis and comparison', () => {
  async function filledCapture(checkpoint: number, offsetHz: number, n = 600, seed = 1) {
    const id = await newCapture('technician', { checkpointId: checkpoint, referenceId: 1 });
    const rnd = seeded(seed);
    const readings = Array.from({ length: n }, (_, i) => ({
      seq: i,
      t: i,
      value: 16e6 + offsetHz + 0.002 * rnd.gauss(),
    }));
    await demo.postReadings(id, readings);
    await request(demo.t.app)
      .post(`/api/captures/${id}/finish`)
      .set(await auth('technician'));
    return id;
  }

  it('answers the analysis of a stored capture per the contract', async () => {
    const id = await filledCapture(demo.ids.checkpoints[0], 4);
    const res = await request(demo.t.app)
      .get(`/api/captures/${id}/analysis?kind=adev&taus=decade`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.body.stats.n).toBe(600);
    // The reference correction f_true = f_displayed·(1 + y_ref) moves the mean by 16 MHz · 2e-12.
    expect(res.body.correction).toMatchObject({ applied: true, yRef: 2e-12 });
    expect(res.body.stats.mean).toBeCloseTo(16e6 + 4, 2);
    expect(res.body.stability.kind).toBe('adev');
    expect(res.body.stability.tau0).toBe(1);
    const p = res.body.stability.points[0];
    expect(Object.keys(p)).toEqual(
      expect.arrayContaining(['tau', 'm', 'dev', 'lo', 'hi', 'edf', 'n']),
    );
    expect(p.lo).toBeLessThan(p.dev);
    expect(p.hi).toBeGreaterThan(p.dev);
    expect(res.body.stability.points.map((q: { m: number }) => q.m).slice(0, 4)).toEqual([
      1, 2, 5, 10,
    ]);
    expect(res.body.uncertainty.k).toBe(2);
    expect(res.body.uncertainty.components.length).toBeGreaterThanOrEqual(3);
  });

  it('gives a "within" verdict for a part that did not move and "exceeds" for one that moved 3 ppm', async () => {
    const before = await filledCapture(demo.ids.checkpoints[0], 4, 600, 2);
    const same = await filledCapture(demo.ids.checkpoints[1], 4.001, 600, 3);
    const moved = await filledCapture(demo.ids.checkpoints[2], 4 + 48, 600, 4); // 48 Hz at 16 MHz = 3 ppm
    const ok = await request(demo.t.app)
      .get(`/api/comparisons?before=${before}&after=${same}`)
      .set(await auth('viewer'));
    expect(ok.status).toBe(200);
    expect(ok.body.verdict).toBe('within');
    expect(ok.body.k).toBe(2);
    expect(ok.body.referenceCorrelated).toBe(true);
    const bad = await request(demo.t.app)
      .get(`/api/comparisons?before=${before}&after=${moved}`)
      .set(await auth('viewer'));
    expect(bad.body.verdict).toBe('exceeds');
    expect(bad.body.deltaPpm).toBeCloseTo(3, 2);
    expect(bad.body.significant).toBe(true);
  });

  it('refuses to compare captures of different DUTs', async () => {
    const a = await filledCapture(demo.ids.checkpoints[0], 1, 50, 5);
    const other = await request(demo.t.app)
      .post('/api/captures')
      .set(await auth('technician'))
      .send({
        dutId: demo.ids.tuningFork.id,
        checkpointId: demo.ids.checkpoints[1],
        quantity: 'frequency',
        unit: 'Hz',
        gateTime: 1,
      });
    const res = await request(demo.t.app)
      .get(`/api/comparisons?before=${a}&after=${other.body.id}`)
      .set(await auth('viewer'));
    expect(res.status).toBe(400);
  });
});

describe('decimated reads', () => {
  it('keeps every extreme when reading a long capture at 200 points', async () => {
    const id = await newCapture();
    const n = 20_000;
    const readings = Array.from({ length: n }, (_, i) => ({
      seq: i,
      t: i * 0.01,
      value: i === 12_345 ? 99 : i === 777 ? -99 : Math.sin(i / 500),
    }));
    await demo.postReadings(id, readings);
    for (const phase of ['open', 'finished']) {
      if (phase === 'finished')
        await request(demo.t.app)
          .post(`/api/captures/${id}/finish`)
          .set(await auth('technician'));
      const res = await request(demo.t.app)
        .get(`/api/captures/${id}/readings?maxPoints=200`)
        .set(await auth('viewer'));
      expect(res.status).toBe(200);
      expect(res.body.readings.length).toBeLessThanOrEqual(200);
      const values = res.body.readings.map((r: { value: number }) => r.value);
      expect(Math.max(...values)).toBe(99);
      expect(Math.min(...values)).toBe(-99);
      const seqs = res.body.readings.map((r: { seq: number }) => r.seq);
      expect(seqs).toEqual([...seqs].sort((a, b) => a - b));
    }
    const range = await request(demo.t.app)
      .get(`/api/captures/${id}/readings?from=100&to=199`)
      .set(await auth('viewer'));
    expect(range.body.readings.map((r: { seq: number }) => r.seq)).toEqual(
      Array.from({ length: 100 }, (_, i) => 100 + i),
    );
  });
});

describe('CSV export', () => {
  it('exports every reading of a capture as CSV with a header', async () => {
    const id = await newCapture();
    await request(demo.t.app)
      .post(`/api/captures/${id}/readings`)
      .set(await auth('technician'))
      .send({ readings: [reading(0), reading(1), { seq: 2, t: 2, value: 16e6, flags: 1 }] });
    const res = await request(demo.t.app)
      .get(`/api/captures/${id}/readings.csv`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toContain('text/csv');
    expect(res.text.trim().split('\n')).toEqual([
      'seq,t_s,value_Hz,flags',
      '0,0,16000000,0',
      '1,1,16000000.001,0',
      '2,2,16000000,1',
    ]);
  });
});

describe('analysis of tiny captures', () => {
  it.each([0, 1, 2, 3])(
    'answers the analysis of a capture with %i reading(s), open and finished, without a server error',
    async (n) => {
      const id = await newCapture('technician', { referenceId: 1 });
      if (n)
        await request(demo.t.app)
          .post(`/api/captures/${id}/readings`)
          .set(await auth('technician'))
          .send({ readings: Array.from({ length: n }, (_, i) => reading(i)) });
      const open = await request(demo.t.app)
        .get(`/api/captures/${id}/analysis`)
        .set(await auth('viewer'));
      expect(open.status).toBe(200);
      expect(open.body.counts.total).toBe(n);
      const fin = await request(demo.t.app)
        .post(`/api/captures/${id}/finish`)
        .set(await auth('technician'));
      expect(fin.status).toBe(200);
      const done = await request(demo.t.app)
        .get(`/api/captures/${id}/analysis?kind=mdev`)
        .set(await auth('viewer'));
      expect(done.status).toBe(200);
      expect(done.body.stats === null).toBe(n < 2);
    },
  );
});
