// The demo lab with a story (`npm start`): seeded through the bench's own create → ingest → finish
// services from the simulators' noise models, once, with a capture left on air and fed live.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { startTestServer } from '../helpers/appServer.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';
import { DEMO_APPROVED_TITLE, seedDemoStory } from '../../server/db/demoStory.js';

let srv: Awaited<ReturnType<typeof startTestServer>>;
let seedMs = 0;
const tokens = new Map<string, string>();
async function auth(role: string) {
  if (!tokens.has(role)) {
    const res = await request(srv.url)
      .post('/api/auth/login')
      .send({ email: `${role}@${DEMO_DOMAIN}`, password: DEMO_PASSWORD });
    tokens.set(role, res.body.token);
  }
  return { authorization: `Bearer ${tokens.get(role)}` };
}

beforeAll(async () => {
  const t0 = Date.now();
  srv = await startTestServer({ demoStory: true });
  seedMs = Date.now() - t0;
  console.log(`demo story: server up with the story seeded in ${(seedMs / 1000).toFixed(1)} s`);
}, 120_000);
afterAll(async () => {
  await srv?.stop();
});

describe('the demo story', () => {
  it('gives a viewer a matrix of verdicts: the tuning fork exceeds after the over-exposure, the disturbed crystal is inconclusive, the rest within', async () => {
    const head = await auth('viewer');
    const studies = (await request(srv.url).get('/api/studies').set(head)).body;
    const list = (studies.items ?? studies.studies ?? studies) as Array<{
      id: number;
      title: string;
      status: string;
    }>;
    const wash = list.find((s) => s.title.startsWith('Aqueous ultrasonic wash'))!;
    const matrix = (await request(srv.url).get(`/api/studies/${wash.id}/matrix`).set(head)).body;
    const verdicts = Object.fromEntries(
      matrix.rows.map(
        (r: {
          dut: { label: string };
          cells: Array<{ comparison: { verdict: string } | null }>;
        }) => [
          r.dut.label.split(' ')[0],
          r.cells.slice(1).map((c) => c.comparison?.verdict ?? null),
        ],
      ),
    );
    // simulators/presets.ts: only the tuning fork shifts (+2.5 ppm from the over-exposure on)
    expect(verdicts).toEqual({
      Y1: ['within', 'within', 'inconclusive'],
      X2: ['within', 'within', 'within'],
      Y3: ['within', 'exceeds', 'exceeds'],
      U4: ['within', 'within', 'within'],
      U5: ['within', 'within', 'within'],
    });
  });

  it('leaves one capture on air and feeds it a reading per gate', async () => {
    const head = await auth('viewer');
    const open = (await request(srv.url).get('/api/captures?state=open').set(head)).body;
    const items = (open.items ?? open.captures ?? open) as Array<{
      id: number;
      readingCount: number;
    }>;
    expect(items).toHaveLength(1);
    const before = items[0].readingCount;
    await new Promise((r) => setTimeout(r, 2600));
    const after = (await request(srv.url).get(`/api/captures/${items[0].id}`).set(head)).body;
    expect((after.capture ?? after).readingCount).toBeGreaterThan(before);
  });

  it('has an approved reflow study to read', async () => {
    const head = await auth('viewer');
    const studies = (await request(srv.url).get('/api/studies').set(head)).body;
    const list = (studies.items ?? studies.studies ?? studies) as Array<{
      title: string;
      status: string;
    }>;
    expect(list.find((s) => s.title === DEMO_APPROVED_TITLE)?.status).toBe('approved');
  });

  it('seeds once: a second run adds nothing', async () => {
    const head = await auth('viewer');
    const count = async () => {
      const res = (await request(srv.url).get('/api/captures?limit=500').set(head)).body;
      return ((res.items ?? res.captures ?? res) as unknown[]).length;
    };
    const n = await count();
    expect(await seedDemoStory(srv.server.db.pool, srv.server.hub)).toBeNull();
    expect(await count()).toBe(n);
  });
});
