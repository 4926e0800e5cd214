import request from 'supertest';
import type { TestApp } from './app.js';
import { DEMO_DOMAIN } from '../../server/db/seed.js';

/** Headers for a demo role of `t`. */
export async function as(t: TestApp, role: string) {
  return { authorization: `Bearer ${await t.tokenFor(role)}` };
}

/** A fresh study with one checkpoint and one DUT, planned by the engineer (status draft). */
export async function plannedStudy(t: TestApp, title = 'Reflow study — review path') {
  const eng = await as(t, 'engineer');
  const study = await request(t.app)
    .post('/api/studies')
    .set(eng)
    .send({ title, process: 'Reflow at 245 °C' });
  if (study.status !== 201) throw new Error(`study: ${study.status} ${JSON.stringify(study.body)}`);
  const cp = await request(t.app)
    .post(`/api/studies/${study.body.id}/checkpoints`)
    .set(eng)
    .send({ name: 'Baseline' });
  const dut = await request(t.app).post(`/api/studies/${study.body.id}/duts`).set(eng).send({
    label: 'Y9 10 MHz crystal',
    kind: 'crystal',
    nominal: 10_000_000,
    unit: 'Hz',
    limit: 1,
    limitUnit: 'ppm',
  });
  if (cp.status !== 201 || dut.status !== 201)
    throw new Error(`plan: ${cp.status} ${dut.status} ${JSON.stringify(dut.body)}`);
  return {
    studyId: study.body.id as number,
    checkpointId: cp.body.id as number,
    dutId: dut.body.id as number,
  };
}

/** Opens a capture (as `role`) with `n` readings; finishes it unless `open`. */
export async function capture(
  t: TestApp,
  plan: { dutId: number; checkpointId: number },
  opts: { n?: number; open?: boolean; role?: string } = {},
) {
  const h = await as(t, opts.role ?? 'engineer');
  const c = await request(t.app).post('/api/captures').set(h).send({
    dutId: plan.dutId,
    checkpointId: plan.checkpointId,
    quantity: 'frequency',
    unit: 'Hz',
    gateTime: 1,
  });
  if (c.status !== 201) throw new Error(`capture: ${c.status} ${JSON.stringify(c.body)}`);
  const n = opts.n ?? 50;
  const readings = Array.from({ length: n }, (_, i) => ({
    seq: i,
    t: i,
    value: 10_000_000 + 0.001 * Math.sin(i),
  }));
  const r = await request(t.app)
    .post(`/api/captures/${c.body.id}/readings`)
    .set(h)
    .send({ readings });
  if (r.status !== 200) throw new Error(`readings: ${r.status} ${JSON.stringify(r.body)}`);
  if (!opts.open) {
    const f = await request(t.app).post(`/api/captures/${c.body.id}/finish`).set(h);
    if (f.status !== 200) throw new Error(`finish: ${f.status} ${JSON.stringify(f.body)}`);
  }
  return c.body.id as number;
}

export const SECOND_LEAD = {
  email: `second.lead@${DEMO_DOMAIN}`,
  name: 'Second Lead',
  password: 'second-lead-passphrase-7',
};

/** Creates a second lead (once) and returns its headers. */
export async function secondLead(t: TestApp) {
  await request(t.app)
    .post('/api/users')
    .set(await as(t, 'admin'))
    .send({ ...SECOND_LEAD, role: 'lead' });
  const login = await request(t.app)
    .post('/api/auth/login')
    .send({ email: SECOND_LEAD.email, password: SECOND_LEAD.password });
  if (login.status !== 200)
    throw new Error(`second lead: ${login.status} ${JSON.stringify(login.body)}`);
  return { authorization: `Bearer ${login.body.token}` };
}
