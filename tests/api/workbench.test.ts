import { describe, expect, it } from 'vitest';
import request from 'supertest';
import Papa from 'papaparse';
import { gaussReadings } from '../helpers/demo.js';
import { useDemoApp } from '../helpers/demoApp.js';

const demo = useDemoApp();
const { auth } = demo;

async function capture(
  dut: { id: number; nominal: number },
  checkpointId: number,
  seed: number,
  opts: { n?: number; finish?: boolean; referenceId?: number } = {},
) {
  const readings = gaussReadings(opts.n ?? 256, seed, (g) => dut.nominal * (1 + 1e-9 * g));
  return demo.recordCapture(
    readings,
    { dutId: dut.id, checkpointId, ambientC: 23.5, referenceId: opts.referenceId ?? 1 },
    { open: opts.finish === false },
  );
}

describe('the overlay of several captures', () => {
  it('returns each capture’s curve with its DUT and checkpoint, in the order asked', async () => {
    const a = await capture(demo.ids.crystal, demo.ids.checkpoints[0], 1);
    const b = await capture(demo.ids.crystal, demo.ids.checkpoints[1], 2);
    const c = await capture(demo.ids.tuningFork, demo.ids.checkpoints[0], 3);
    const res = await request(demo.t.app)
      .get(`/api/captures/stability?ids=${c},${a},${b}`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.body.kind).toBe('oadev');
    expect(res.body.curves.map((x: { captureId: number }) => x.captureId)).toEqual([c, a, b]);
    expect(res.body.curves[0].dut.label).toMatch(/^Y3/);
    expect(res.body.curves[1].checkpoint.id).toBe(demo.ids.checkpoints[0]);
    for (const curve of res.body.curves) {
      expect(curve.stability.points.length).toBeGreaterThan(3);
      // 256 readings, octave τ from τ0 = 1 s: the first point is at τ = 1 s (common practice, no source).
      expect(curve.stability.points[0].tau).toBe(1);
      expect(curve.stability.points[0].lo).toBeLessThan(curve.stability.points[0].dev);
    }
    // The same curve the capture's own analysis route gives.
    const own = await request(demo.t.app)
      .get(`/api/captures/${a}/analysis?kind=mdev`)
      .set(await auth('viewer'));
    const mdev = await request(demo.t.app)
      .get(`/api/captures/stability?ids=${a},${b}&kind=mdev`)
      .set(await auth('viewer'));
    expect(mdev.status).toBe(200);
    expect(mdev.body.curves[0].stability.points.map((p: { dev: number }) => p.dev)).toEqual(
      own.body.stability.points.map((p: { dev: number }) => p.dev),
    );
  });

  it('runs the same number of queries for two captures as for eight (no query per capture)', async () => {
    const list: number[] = [];
    for (let i = 0; i < 8; i++)
      list.push(
        await capture(
          i % 2 ? demo.ids.crystal : demo.ids.tuningFork,
          demo.ids.checkpoints[i % 4],
          10 + i,
          {
            n: 64,
          },
        ),
      );
    const token = await auth('viewer');
    // Warm the session lookup so both runs pay the same fixed cost.
    await request(demo.t.app).get(`/api/captures/stability?ids=${list[0]}`).set(token);
    for (const kind of ['oadev', 'hdev']) {
      const two = await demo.queriesOf(() =>
        request(demo.t.app)
          .get(`/api/captures/stability?ids=${list.slice(0, 2).join(',')}&kind=${kind}`)
          .set(token)
          .expect(200),
      );
      const eight = await demo.queriesOf(() =>
        request(demo.t.app)
          .get(`/api/captures/stability?ids=${list.join(',')}&kind=${kind}`)
          .set(token)
          .expect(200),
      );
      // Session lookup, captures, DUTs, checkpoints (and the readings for a kind not stored): a handful, not one per capture.
      expect(two).toBeGreaterThanOrEqual(4);
      expect(eight).toBe(two);
    }
  });

  it('refuses more than 12 captures, an open capture and a missing one', async () => {
    const many = Array.from({ length: 13 }, (_, i) => i + 1).join(',');
    const tooMany = await request(demo.t.app)
      .get(`/api/captures/stability?ids=${many}`)
      .set(await auth('viewer'));
    expect(tooMany.status).toBe(400);
    expect(tooMany.body.error.message).toContain('at most 12');
    const open = await capture(demo.ids.crystal, demo.ids.checkpoints[2], 30, { finish: false });
    const refused = await request(demo.t.app)
      .get(`/api/captures/stability?ids=${open}`)
      .set(await auth('viewer'));
    expect(refused.status).toBe(409);
    const missing = await request(demo.t.app)
      .get('/api/captures/stability?ids=999999')
      .set(await auth('viewer'));
    expect(missing.status).toBe(404);
    const bad = await request(demo.t.app)
      .get('/api/captures/stability?ids=1;2')
      .set(await auth('viewer'));
    expect(bad.status).toBe(400);
  });
});

describe('exports', () => {
  it('a capture’s CSV starts with its metadata as # lines, then raw and reference-corrected readings', async () => {
    const id = await capture(demo.ids.crystal, demo.ids.checkpoints[0], 40, { n: 5 });
    const res = await request(demo.t.app)
      .get(`/api/captures/${id}/export.csv`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toContain('text/csv');
    const lines = res.text.trim().split('\n');
    const meta = Object.fromEntries(
      lines
        .filter((l) => l.startsWith('# '))
        .map((l) =>
          l
            .slice(2)
            .split(/: (.*)/s)
            .slice(0, 2),
        ),
    );
    expect(meta.capture).toBe(String(id));
    expect(meta.dut).toMatch(/^Y1/);
    expect(meta.gate_s).toBe('1');
    expect(meta.ambient_c).toBe('23.5');
    expect(meta.operator).not.toBe('');
    expect(meta.reference).not.toBe('');
    expect(new Date(meta.started_at).toISOString()).toBe(meta.started_at);
    expect(meta.seal_sha256).toMatch(/^[0-9a-f]{64}$/);
    const yRef = Number(meta.reference_offset);
    expect(Number.isFinite(yRef)).toBe(true);
    const header = lines.findIndex((l) => l.startsWith('seq,'));
    expect(lines[header]).toBe('seq,t_s,value_Hz,corrected_Hz,flags');
    const rows = lines.slice(header + 1).map((l) => l.split(',').map(Number));
    expect(rows).toHaveLength(5);
    for (const [seq, tS, raw, corrected, flags] of rows) {
      expect(tS).toBe(seq);
      expect(flags).toBe(0);
      // DEVELOPERS.md "Measurement conventions": f_true = f_displayed·(1 + y_ref).
      expect(corrected).toBe(raw * (1 + yRef));
    }
  });

  it('the study CSV has one row per finished capture with its metadata and seal', async () => {
    const res = await request(demo.t.app)
      .get(`/api/studies/${demo.ids.studyId}/captures.csv`)
      .set(await auth('viewer'));
    expect(res.status).toBe(200);
    const [keys, ...rows] = Papa.parse<string[]>(res.text.trim()).data;
    for (const k of [
      'dut',
      'checkpoint',
      'gate_s',
      'reference',
      'reference_offset',
      'ambient_c',
      'operator',
      'started_at',
      'seal_sha256',
    ])
      expect(keys).toContain(k);
    const { rows: finished } = await demo.t.db.pool.query<{ id: number }>(
      "SELECT c.id FROM captures c JOIN duts d ON d.id = c.dut_id WHERE d.study_id = $1 AND c.state = 'finished' ORDER BY c.id",
      [demo.ids.studyId],
    );
    expect(rows.map((r) => Number(r[0]))).toEqual(finished.map((f) => f.id));
    const seal = keys.indexOf('seal_sha256');
    for (const r of rows) expect(r[seal]).toMatch(/^[0-9a-f]{64}$/);
    const missing = await request(demo.t.app)
      .get('/api/studies/99999/captures.csv')
      .set(await auth('viewer'));
    expect(missing.status).toBe(404);
  });
});
