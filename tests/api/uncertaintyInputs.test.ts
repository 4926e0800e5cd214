// Issue 8 through the API: references with a calibration record, counters with a type and
// resolution, DUT limits (asymmetric, one-sided) and tuning-fork parameters, drift removal on the
// analysis route, and Δ's budget with k from ν_eff, on a real PostgreSQL.
import { describe, expect, it } from 'vitest';
import { seeded } from '../helpers/demo.js';
import { useDemoApp } from '../helpers/demoApp.js';

const demo = useDemoApp();
const { call } = demo;

async function capture(body: Record<string, unknown>, values: (i: number) => number, n = 300) {
  const c = await call('technician', 'post', '/api/captures', {
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
    ...body,
  });
  expect(c.status).toBe(201);
  const readings = Array.from({ length: n }, (_, i) => ({ seq: i, t: i, value: values(i) }));
  await call('technician', 'post', `/api/captures/${c.body.id}/readings`, { readings });
  const fin = await call('technician', 'post', `/api/captures/${c.body.id}/finish`);
  expect(fin.status).toBe(200);
  return fin.body as {
    id: number;
    summary: Record<string, any>;
    counterType: string | null;
    referenceAgeingPerDay: number | null;
  };
}

/** A capture of the demo crystal at checkpoint `cp` (0 or 1), at 23 °C, reading exactly its nominal. */
const crystalAt = (cp: number, extra: Record<string, unknown> = {}) =>
  capture(
    {
      dutId: demo.ids.crystal.id,
      checkpointId: demo.ids.checkpoints[cp],
      ambientC: 23,
      ...extra,
    },
    () => demo.ids.crystal.nominal,
  );

/** The budget line named `name`. */
const line = (components: { name: string }[], name: string) =>
  components.find((c) => c.name === name) as { name: string; contribution: number; value: number };

/** Moves a capture `days` back in time; its stored summary is marked old, so it is recomputed. */
const backdate = (id: number, days: number) =>
  demo.t.db.pool.query(
    `UPDATE captures SET started_at = started_at - make_interval(days => $2),
       summary = jsonb_set(summary, '{version}', '1') WHERE id = $1`,
    [id, days],
  );

describe('frequency references', () => {
  it('lets a lead register a reference with its ageing, audited, and refuses an engineer', async () => {
    const body = {
      name: 'Bench OCXO 10 MHz',
      kind: 'ocxo',
      nominalHz: 10e6,
      fractionalOffset: 3e-10,
      standardUncertainty: 2e-11,
      verifiedAt: '2026-11-02',
      verifiedBy: 'Against the disciplined reference, 24 h',
      ageingPerDay: 5e-11,
      ageingUPerDay: 2e-11,
    };
    const refused = await call('engineer', 'post', '/api/references', body);
    expect(refused.status).toBe(403);
    const res = await call('lead', 'post', '/api/references', body);
    expect(res.status).toBe(201);
    expect(res.body.reference).toMatchObject({
      kind: 'ocxo',
      ageingPerDay: 5e-11,
      ageingUPerDay: 2e-11,
      verifiedAt: '2026-11-02',
    });
    const patched = await call('admin', 'patch', `/api/references/${res.body.reference.id}`, {
      ageingPerDay: 4e-11,
    });
    expect(patched.status).toBe(200);
    expect(patched.body.reference.ageingPerDay).toBe(4e-11);
    const { rows } = await demo.t.db.pool.query(
      "SELECT action, details FROM audit_events WHERE subject_type = 'reference' ORDER BY id",
    );
    expect(rows.map((r: { action: string }) => r.action)).toEqual([
      'reference.create',
      'reference.update',
    ]);
    expect(rows[1].details).toEqual({ ageingPerDay: { from: 5e-11, to: 4e-11 } });
  });

  it('refuses a kind outside the list and a negative ageing uncertainty with 400', async () => {
    const base = { name: 'X', nominalHz: 10e6, fractionalOffset: 0, standardUncertainty: 1e-11 };
    const a = await call('lead', 'post', '/api/references', { ...base, kind: 'sundial' });
    expect(a.status).toBe(400);
    const b = await call('lead', 'post', '/api/references', {
      ...base,
      ageingUPerDay: -1e-12,
    });
    expect(b.status).toBe(400);
    expect(b.body.error.details[0].path).toBe('ageingUPerDay');
  });
});

describe('counter type and resolution', () => {
  it('copies the counter type at start and books ±1 count for a gated counter even when every reading is identical', async () => {
    const inst = await call('admin', 'post', '/api/instruments', {
      name: 'Gated counter G-1',
      kind: 'counter',
      counterType: 'gated',
      counterResolution: 1,
    });
    expect(inst.status).toBe(201);
    expect(inst.body.instrument).toMatchObject({ counterType: 'gated', counterResolution: 1 });
    const c = await capture(
      {
        dutId: demo.ids.tuningFork.id,
        checkpointId: demo.ids.checkpoints[0],
        instrumentId: inst.body.instrument.id,
        ambientC: 23,
      },
      () => 32768,
    );
    expect(c.counterType).toBe('gated');
    // Later changes to the instrument do not rewrite the evidence.
    await call('admin', 'patch', `/api/instruments/${inst.body.instrument.id}`, {
      counterType: 'reciprocal',
      counterResolution: 1e-10,
    });
    const a = await call('viewer', 'get', `/api/captures/${c.id}/analysis`);
    const res = line(a.body.uncertainty.components, 'Counter resolution');
    expect(res.value).toBeCloseTo(1 / Math.sqrt(3), 12); // ±1/t_gate Hz, a/√3 (counter theory; JCGM 100 §4.3.7)
    expect(a.body.uncertainty.combined).toBeGreaterThan(0.5); // identical readings: no collapse
    expect(a.body.uncertainty.k).toBe(2); // ν_eff = ∞: Driftbench's floor
    expect(a.body.uncertainty.coverage).toMatch(/^k = 2\.00/);
  });

  it('refuses an unknown counter type with 400', async () => {
    const res = await call('admin', 'post', '/api/instruments', {
      name: 'C',
      kind: 'counter',
      counterType: 'magic',
    });
    expect(res.status).toBe(400);
  });
});

describe('drift on the analysis route', () => {
  it('removes a linear drift by default, reports it in ppb/day, and keeps it when asked for none', async () => {
    const f0 = demo.ids.crystal.nominal;
    const rnd = seeded(4);
    // 1e-11 per second of drift (0.864 ppm/day = 864 ppb/day) on white noise of 1e-11.
    const c = await capture(
      {
        dutId: demo.ids.crystal.id,
        checkpointId: demo.ids.checkpoints[0],
        referenceId: 1,
        ambientC: 23,
      },
      (i) => f0 * (1 + 1e-11 * rnd.gauss() + 1e-11 * i),
      1024,
    );
    const lin = await call('viewer', 'get', `/api/captures/${c.id}/analysis`);
    expect(lin.body.driftModel).toBe('linear');
    expect(lin.body.drift.rateUnit).toBe('ppb/day');
    expect(lin.body.drift.rateInUnit).toBeCloseTo(864, 0); // 1e-11/s × 86 400 s × 1e9 (by hand)
    expect(lin.body.drift.rateStderrInUnit).toBeGreaterThan(0);
    const driftLine = lin.body.uncertainty.components.find(
      (x: { key?: string }) => x.key === 'drift',
    );
    // |D|·T/√12 × f0 with T = 1024 s (by hand): 1e-11 × 1024 / 3.4641 × 16e6 = 0.0473 Hz
    expect(driftLine.value).toBeCloseTo((1e-11 * Math.sqrt(1024 ** 2 - 1) * f0) / Math.sqrt(12), 3);
    const none = await call('viewer', 'get', `/api/captures/${c.id}/analysis?drift=none`);
    expect(none.body.driftModel).toBe('none');
    const last = (b: { stability: { points: { dev: number }[] } }) =>
      b.stability.points[b.stability.points.length - 1].dev;
    // Left in, the drift dominates σ_y at the longest τ: D·τ/√2 (SP 1065 §5.2.5, from memory).
    expect(last(none.body)).toBeGreaterThan(100 * last(lin.body));
    expect(none.body.uncertainty.components.some((x: { key?: string }) => x.key === 'drift')).toBe(
      false,
    );
    const quad = await call(
      'viewer',
      'get',
      `/api/captures/${c.id}/analysis?drift=quadratic&kind=mdev`,
    );
    expect(quad.body.driftModel).toBe('quadratic');
    expect(quad.status).toBe(200);
    const bad = await call('viewer', 'get', `/api/captures/${c.id}/analysis?drift=cubic`);
    expect(bad.status).toBe(400);
  });
});

describe('DUT limits and the comparison budget', () => {
  it('accepts an asymmetric limit, edits it to one-sided, audits it, and decides each side with the guard band', async () => {
    const created = await call('engineer', 'post', `/api/studies/${demo.ids.studyId}/duts`, {
      label: 'Y9 10 MHz crystal',
      kind: 'crystal',
      nominal: 10e6,
      unit: 'Hz',
      limitLow: -1,
      limitHigh: 2,
      limitUnit: 'ppm',
    });
    expect(created.status).toBe(201);
    expect(created.body).toMatchObject({ limit: null, limitLow: -1, limitHigh: 2 });
    const both = await call('engineer', 'post', `/api/studies/${demo.ids.studyId}/duts`, {
      label: 'bad',
      kind: 'crystal',
      nominal: 10e6,
      unit: 'Hz',
      limit: 1,
      limitHigh: 2,
      limitUnit: 'ppm',
    });
    expect(both.status).toBe(400);
    const dutId = created.body.id;
    const f0 = 10e6;
    const rnd = seeded(9);
    const base = await capture(
      { dutId, checkpointId: demo.ids.checkpoints[0], referenceId: 1, ambientC: 23 },
      () => f0 * (1 + 1e-10 * rnd.gauss()),
    );
    const up = await capture(
      { dutId, checkpointId: demo.ids.checkpoints[1], referenceId: 1, ambientC: 23 },
      () => f0 * (1 + 1.5e-6 + 1e-10 * rnd.gauss()),
    );
    const r = await call('viewer', 'get', `/api/comparisons?before=${base.id}&after=${up.id}`);
    expect(r.body.deltaPpm).toBeCloseTo(1.5, 3);
    expect(r.body.verdict).toBe('within'); // 1.5 + U ≤ 2 and 1.5 − U ≥ −1 (ILAC-G8 w = U)
    expect(r.body.limitLowInUnit).toBeCloseTo(-10, 9);
    expect(r.body.limitHighInUnit).toBeCloseTo(20, 9);
    // Against a symmetric ±1 ppm the same change exceeds.
    const sym = await call('engineer', 'patch', `/api/duts/${dutId}`, { limit: 1 });
    expect(sym.status).toBe(200);
    expect(sym.body.dut).toMatchObject({ limit: 1, limitLow: -1, limitHigh: 1 });
    const r2 = await call('viewer', 'get', `/api/comparisons?before=${base.id}&after=${up.id}`);
    expect(r2.body.verdict).toBe('exceeds');
    // One-sided "≤ 1.2 ppm": only the upper bound binds.
    const one = await call('engineer', 'patch', `/api/duts/${dutId}`, {
      limit: null,
      limitHigh: 1.2,
    });
    expect(one.body.dut).toMatchObject({ limit: null, limitLow: null, limitHigh: 1.2 });
    const r3 = await call('viewer', 'get', `/api/comparisons?before=${base.id}&after=${up.id}`);
    expect(r3.body.verdict).toBe('exceeds');
    const crossed = await call('engineer', 'patch', `/api/duts/${dutId}`, { limitLow: 2 });
    expect(crossed.status).toBe(400);
    const viewer = await call('viewer', 'patch', `/api/duts/${dutId}`, { limit: 1 });
    expect(viewer.status).toBe(403);
    const { rows } = await demo.t.db.pool.query(
      "SELECT count(*)::int AS n FROM audit_events WHERE action = 'dut.update' AND subject_id = $1",
      [dutId],
    );
    expect(rows[0].n).toBe(2);
  });

  it('books T0 and B of a tuning fork as shared inputs: 20 → 30 °C is not "within" ±2 ppm any more', async () => {
    const created = await call('engineer', 'post', `/api/studies/${demo.ids.studyId}/duts`, {
      label: 'Y8 tuning fork',
      kind: 'tuning-fork',
      nominal: 32768,
      unit: 'Hz',
      limit: 2,
      limitUnit: 'ppm',
    });
    expect(created.body.tuningFork).toMatchObject({ T0: 25, B: -0.034, defaults: true });
    const dutId = created.body.id;
    const f0 = 32768;
    const rnd = seeded(21);
    const at = (T: number, ppm: number) => () =>
      f0 * (1 + (ppm - 0.034 * (T - 25) ** 2) * 1e-6 + 1e-9 * rnd.gauss());
    const cold = await capture(
      { dutId, checkpointId: demo.ids.checkpoints[0], referenceId: 1, ambientC: 20 },
      at(20, 0),
    );
    const warm = await capture(
      { dutId, checkpointId: demo.ids.checkpoints[1], referenceId: 1, ambientC: 30 },
      at(30, 0.1),
    );
    const r = await call('viewer', 'get', `/api/comparisons?before=${cold.id}&after=${warm.id}`);
    expect(r.status).toBe(200);
    expect(r.body.deltaPpm).toBeCloseTo(0.1, 2);
    const t0 = line(r.body.budget.components, 'Turnover temperature T0 (shared)');
    // 0.68 ppm/°C × 5/√3 °C = 1.963 ppm (issue 8, by hand), × 32 768 Hz × 1e-6
    expect(t0.contribution / f0 / 1e-6).toBeCloseTo(1.963, 2);
    expect(r.body.verdict).toBe('inconclusive');
    expect(r.body.k).toBeGreaterThanOrEqual(2);
    expect(r.body.coverage).toMatch(/^k = \d\.\d\d (from|with) ν_eff (=|>) /);
    // A DUT's own, tighter T0 shrinks the line: u(T0) = 0.5 °C gives 0.34 ppm (by hand).
    await call('engineer', 'patch', `/api/duts/${dutId}`, { turnoverC: 25, turnoverU: 0.5 });
    const tight = await call(
      'viewer',
      'get',
      `/api/comparisons?before=${cold.id}&after=${warm.id}`,
    );
    const t0b = line(tight.body.budget.components, 'Turnover temperature T0 (shared)');
    expect(t0b.contribution / f0 / 1e-6).toBeCloseTo(0.34, 2);
  });

  it('adds the shared reference ageing between captures to Δ and cancels its offset', async () => {
    const ref = await call('lead', 'post', '/api/references', {
      name: 'Counter timebase',
      kind: 'internal-timebase',
      nominalHz: 10e6,
      fractionalOffset: 0,
      standardUncertainty: 1e-8,
      verifiedAt: '2026-11-01',
      ageingPerDay: 1e-9,
      ageingUPerDay: 0,
    });
    const referenceId = ref.body.reference.id;
    const f0 = demo.ids.crystal.nominal;
    const a = await crystalAt(0, { referenceId });
    expect(a.referenceAgeingPerDay).toBe(1e-9);
    const b = await crystalAt(1, { referenceId });
    // Move the first capture 10 days back in time: the reference aged 1e-8 in between.
    await backdate(a.id, 10);
    const r = await call('viewer', 'get', `/api/comparisons?before=${a.id}&after=${b.id}`);
    const names = r.body.budget.components.map((c: { name: string }) => c.name);
    expect(names).toContain('Reference offset (shared, r = 1)');
    expect(names).toContain('Reference ageing between captures');
    const ageing = line(r.body.budget.components, 'Reference ageing between captures');
    expect(ageing.contribution).toBeCloseTo(1e-9 * 10 * f0, 4); // 1e-9/day × 10 days × 16 MHz = 0.16 Hz (by hand)
    const offset = line(r.body.budget.components, 'Reference offset (shared, r = 1)');
    expect(offset.contribution).toBeLessThan(1e-12); // 1e-8 × f0 on both sides cancels (eq. 16)
    // Each capture's own budget books the ageing since verification (about a month at 1e-9/day).
    const own = await call('viewer', 'get', `/api/captures/${b.id}/analysis`);
    const since = own.body.uncertainty.components.find(
      (c: { key?: string }) => c.key === 'reference-ageing',
    );
    expect(since.value / f0).toBeGreaterThan(1e-9 * 25);
  });
});

describe('review8 findings in the comparison', () => {
  it('F5: a reference re-verified between the captures is not cancelled (r = 0), with a note', async () => {
    const ref = await call('lead', 'post', '/api/references', {
      name: 'Re-verified OCXO',
      kind: 'ocxo',
      nominalHz: 10e6,
      fractionalOffset: 0,
      standardUncertainty: 1e-7,
      verifiedAt: '2026-11-01',
      ageingPerDay: 0,
      ageingUPerDay: 0,
    });
    const referenceId = ref.body.reference.id;
    const f0 = demo.ids.crystal.nominal;
    const a = await crystalAt(0, { referenceId });
    await call('lead', 'patch', `/api/references/${referenceId}`, {
      fractionalOffset: 2e-8,
      verifiedAt: '2026-11-20',
    });
    const b = await crystalAt(1, { referenceId });
    const r = await call('viewer', 'get', `/api/comparisons?before=${a.id}&after=${b.id}`);
    expect(r.status).toBe(200);
    const names = r.body.budget.components.map((c: { name: string }) => c.name);
    expect(names).not.toContain('Reference offset (shared, r = 1)');
    expect(r.body.referenceCorrelated).toBe(false);
    // Two independent calibrations of u = 1e-7 each: u(Δ) ≥ √2 × 1e-7 × f0 (JCGM 100 eq. 10, by hand)
    expect(r.body.u).toBeGreaterThanOrEqual(Math.SQRT2 * 1e-7 * f0 * 0.999);
    expect(r.body.notes.join(' ')).toMatch(/re-verified between the captures.*independent/);
  });

  it('F4: with no reference, a default ±1 ppm timebase term enters Δ, with a note', async () => {
    const f0 = demo.ids.crystal.nominal;
    const a = await crystalAt(0);
    const b = await crystalAt(1);
    const r = await call('viewer', 'get', `/api/comparisons?before=${a.id}&after=${b.id}`);
    expect(r.status).toBe(200);
    const tb = line(r.body.budget.components, 'Counter timebase between captures (no reference)');
    expect(tb).toBeDefined();
    // ±1 ppm rectangular: 1e-6/√3 × f0 (common practice, no source; JCGM 100 §4.3.7 a/√3)
    expect(tb.contribution).toBeCloseTo((1e-6 / Math.sqrt(3)) * f0, 6);
    expect(r.body.notes.join(' ')).toMatch(/No reference was used/);
  });

  it("F4: a shared reference without an ageing rate gets its kind's default rate between captures", async () => {
    const ref = await call('lead', 'post', '/api/references', {
      name: 'OCXO without a rate',
      kind: 'ocxo',
      nominalHz: 10e6,
      fractionalOffset: 0,
      standardUncertainty: 1e-10,
      verifiedAt: '2026-11-01',
    });
    const referenceId = ref.body.reference.id;
    const f0 = demo.ids.crystal.nominal;
    const a = await crystalAt(0, { referenceId });
    const b = await crystalAt(1, { referenceId });
    await backdate(a.id, 10);
    const r = await call('viewer', 'get', `/api/comparisons?before=${a.id}&after=${b.id}`);
    const ageing = line(r.body.budget.components, 'Reference ageing between captures');
    // OCXO default 1e-9/day (common practice, no source) × 10 days × f0 (by hand)
    expect(ageing.contribution).toBeCloseTo(1e-9 * 10 * f0, 3);
    expect(r.body.notes.join(' ')).toMatch(/no ageing rate recorded/);
  });

  it('F7: a capture in mg gets k = t(ν) with ν = n − 1 and a resolution line, so identical readings do not give U = 0', async () => {
    const created = await call('engineer', 'post', `/api/studies/${demo.ids.studyId}/duts`, {
      label: 'A7 accelerometer',
      kind: 'accelerometer',
      nominal: 1000,
      unit: 'mg',
      limit: 5,
      limitUnit: 'mg',
    });
    expect(created.status).toBe(201);
    const dutId = created.body.id;
    const base = { quantity: 'acceleration', unit: 'mg', gateTime: 1 };
    const flat = await capture(
      { ...base, dutId, checkpointId: demo.ids.checkpoints[0] },
      () => 1.0,
      5,
    );
    const same = await capture(
      { ...base, dutId, checkpointId: demo.ids.checkpoints[1] },
      () => 1.0,
      5,
    );
    const r = await call('viewer', 'get', `/api/comparisons?before=${flat.id}&after=${same.id}`);
    expect(r.status).toBe(200);
    // Resolution only: a = 0.0625/2 mg per side, u = a/√3 = 0.018042 mg; u(Δ) = √2 × that = 0.025516 mg
    // (JCGM 100 §4.3.7, by hand; LSB 0.0625 mg common practice, no source)
    expect(r.body.u).toBeCloseTo(0.025516, 5);
    expect(r.body.expandedUncertainty).toBeGreaterThan(0);
    const g = seeded(77);
    const b2 = await capture(
      { ...base, dutId, checkpointId: demo.ids.checkpoints[0] },
      () => 1 + 0.5 * g.gauss(),
      5,
    );
    const a2 = await capture(
      { ...base, dutId, checkpointId: demo.ids.checkpoints[1] },
      () => 1 + 0.5 * g.gauss(),
      5,
    );
    const r2 = await call('viewer', 'get', `/api/comparisons?before=${b2.id}&after=${a2.id}`);
    // Type A lines dominate: ν_eff near 8 (n = 5 per side) gives k ≈ t_0.975(ν_eff) > 2.3 — t_0.975(8) = 2.306, Student t table (from memory)
    expect(r2.body.effectiveDof).toBeLessThan(9);
    expect(r2.body.k).toBeGreaterThan(2.3);
  });
});
