import { beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { LIST_LIMITS } from '../../shared/protocol/paging.js';
import { linkPreset } from '../../shared/protocol/linkProfile.js';

// Issue 10, item 1: every stored JSON field has a schema and a size limit, lists leave heavy
// fields out, and every list route pages with ?limit&cursor (a default and a maximum).
const demo = useDemoApp();
let admin: { authorization: string };
const auth = () => admin;
beforeAll(async () => {
  admin = await demo.auth('admin');
});

async function everyPage(path: string, key: string, limit: number) {
  const seen: Array<{ id: number }> = [];
  let cursor: string | null = null;
  let pages = 0;
  do {
    const res: request.Response = await request(demo.t.app)
      .get(path)
      .query({ limit, ...(cursor ? { cursor } : {}) })
      .set(auth());
    expect(res.status).toBe(200);
    expect(res.body[key].length).toBeLessThanOrEqual(limit);
    seen.push(...res.body[key]);
    cursor = res.body.nextCursor;
    pages++;
  } while (cursor && pages < 100);
  return { seen, pages };
}

describe('paging of list routes', () => {
  it('pages instruments by name with ties, neither skipping nor repeating one', async () => {
    for (const name of ['Probe', 'Probe', 'Probe', 'Amp', 'Zed']) {
      await request(demo.t.app)
        .post('/api/instruments')
        .set(auth())
        .send({ name, kind: 'other' })
        .expect(201);
    }
    const all = (await request(demo.t.app).get('/api/instruments').set(auth())).body;
    expect(all.nextCursor).toBeNull();
    const { seen, pages } = await everyPage('/api/instruments', 'instruments', 2);
    expect(pages).toBe(Math.ceil(all.instruments.length / 2));
    expect(seen.map((i) => i.id)).toEqual(all.instruments.map((i: { id: number }) => i.id));
  });

  it.each([
    ['/api/users', 'users'],
    ['/api/studies', 'studies'],
    ['/api/references', 'references'],
  ])('pages %s with limit 1 through every item', async (path, key) => {
    const all = (await request(demo.t.app).get(path).set(auth())).body[key] as Array<{
      id: number;
    }>;
    const { seen } = await everyPage(path, key, 1);
    expect(seen.map((i) => i.id)).toEqual(all.map((i) => i.id));
  });

  it.each(Object.entries(LIST_LIMITS))(
    'refuses a limit over the maximum on /api/%s with 400',
    async (name, l) => {
      const res = await request(demo.t.app)
        .get(`/api/${name}`)
        .query({ limit: l.max + 1 })
        .set(auth());
      expect(res.status).toBe(400);
      expect(res.body.error.details[0].path).toBe('limit');
    },
  );

  it.each(['not-a-cursor', 'eyJ4IjoxfQ', ''])(
    'refuses a cursor it did not give (%j) with 400',
    async (cursor) => {
      const res = await request(demo.t.app)
        .get('/api/captures')
        .query({ cursor: cursor || '!!' })
        .set(auth());
      expect(res.status).toBe(400);
    },
  );
});

describe('stored JSON fields have a schema and a size', () => {
  it('refuses a capture whose link profile is not a link profile, or is huge, with 400', async () => {
    const base = demo.captureBody();
    const junk = await request(demo.t.app)
      .post('/api/captures')
      .set(auth())
      .send({ ...base, linkProfile: { blob: 'x'.repeat(50_000) } });
    expect(junk.status).toBe(400);
    const padded = {
      ...linkPreset('talk-counter'),
      initCommands: Array.from({ length: 5000 }, () => 'x'),
    };
    expect(
      (
        await request(demo.t.app)
          .post('/api/captures')
          .set(auth())
          .send({ ...base, linkProfile: padded })
      ).status,
    ).toBe(400);
    const ok = await request(demo.t.app)
      .post('/api/captures')
      .set(auth())
      .send({ ...base, linkProfile: linkPreset('talk-counter') });
    expect(ok.status).toBe(201);
    expect(ok.body.linkProfile.name).toBe('Streaming counter (talk-only)');
  });

  it('keeps the link profile and the summary out of the captures list, and in the capture itself', async () => {
    const list = await request(demo.t.app).get('/api/captures').set(auth());
    expect(list.status).toBe(200);
    expect(list.body.captures.length).toBeGreaterThan(0);
    for (const c of list.body.captures) {
      expect(c).not.toHaveProperty('linkProfile');
      expect(c).not.toHaveProperty('summary');
    }
    const one = await request(demo.t.app)
      .get(`/api/captures/${list.body.captures[0].id}`)
      .set(auth());
    expect(one.body.linkProfile).not.toBeNull();
  });

  it('answers the captures list quickly in size however many captures carry profiles', async () => {
    for (let i = 0; i < 20; i++)
      await demo.newCapture('admin', { linkProfile: linkPreset('scpi-counter') });
    const list = await request(demo.t.app).get('/api/captures').set(auth());
    // 21 captures of about 600 bytes each without profiles (common practice, no source: a generous bound).
    expect(list.text.length).toBeLessThan(21 * 1500);
  });
});
