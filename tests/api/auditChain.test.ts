import { describe, expect, it } from 'vitest';
import request from 'supertest';
import { createHash } from 'node:crypto';
import { useDemoApp } from '../helpers/demoApp.js';
import { capture, plannedStudy } from '../helpers/review.js';

const demo = useDemoApp();

const verify = async () =>
  request(demo.t.app)
    .get('/api/audit/verify')
    .set(await demo.auth('admin'));

/**
 * The chain as docs/record.md describes it, recomputed here independently of the server: SHA-256
 * (hex) over prev_hash, id, actor id, action, subject type, subject id, details as jsonb text and
 * the UTC time with microseconds, joined by the unit separator U+001F.
 */
async function recomputeInJs() {
  const { rows } = await demo.t.db.pool.query(
    `SELECT id, prev_hash, hash, actor_id, action, subject_type, subject_id, details::text AS details,
            to_char(created_at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.US"Z"') AS at
     FROM audit_events ORDER BY id`,
  );
  let prev = '0'.repeat(64);
  for (const r of rows) {
    const content = [
      prev,
      String(r.id),
      r.actor_id ?? '',
      r.action,
      r.subject_type,
      r.subject_id ?? '',
      r.details ?? 'null',
      r.at,
    ].join('\u001f');
    const h = createHash('sha256').update(content, 'utf8').digest('hex');
    if (r.prev_hash !== prev || r.hash !== h) return { ok: false, at: Number(r.id) };
    prev = h;
  }
  return { ok: true, count: rows.length };
}

describe('the audit chain', () => {
  it('links every event to the one before it, as the documented hash says', async () => {
    const plan = await plannedStudy(demo.t, 'Chained study');
    await capture(demo.t, plan);
    const v = await verify();
    expect(v.status).toBe(200);
    expect(v.body).toMatchObject({ ok: true, firstBroken: null });
    expect(v.body.checked).toBeGreaterThan(4);
    const js = await recomputeInJs();
    expect(js).toEqual({ ok: true, count: v.body.checked });
  });

  it('cannot fork under concurrent writers: 30 audited changes at once leave one straight chain', async () => {
    const eng = await demo.auth('engineer');
    const results = await Promise.all(
      Array.from({ length: 30 }, (_, i) =>
        request(demo.t.app)
          .post('/api/studies')
          .set(eng)
          .send({ title: `Concurrent study ${i}` }),
      ),
    );
    expect(results.every((r) => r.status === 201)).toBe(true);
    const { rows } = await demo.t.db.pool.query(
      'SELECT prev_hash, count(*)::int AS n FROM audit_events GROUP BY prev_hash HAVING count(*) > 1',
    );
    expect(rows).toEqual([]);
    expect((await verify()).body.ok).toBe(true);
  });

  it('records role and account changes with before → after', async () => {
    const created = await request(demo.t.app)
      .post('/api/users')
      .set(await demo.auth('admin'))
      .send({
        email: 'chain.viewer@kestrelbay.example',
        name: 'Chain Viewer',
        role: 'viewer',
        password: 'chain-viewer-passphrase-3',
      });
    const id = created.body.user.id;
    await request(demo.t.app)
      .patch(`/api/users/${id}`)
      .set(await demo.auth('admin'))
      .send({ role: 'technician' });
    const res = await request(demo.t.app)
      .get(`/api/audit?kind=user.role`)
      .set(await demo.auth('admin'));
    expect(res.body.events[0]).toMatchObject({
      subjectId: id,
      details: { from: 'viewer', to: 'technician' },
      actorName: 'Ada Admin',
    });
  });

  it.each(['lead', 'engineer', 'technician', 'viewer'])(
    'keeps the lab-wide log and its check for admins: 403 for the %s',
    async (role) => {
      expect(
        (
          await request(demo.t.app)
            .get('/api/audit')
            .set(await demo.auth(role))
        ).status,
      ).toBe(403);
      expect(
        (
          await request(demo.t.app)
            .get('/api/audit/verify')
            .set(await demo.auth(role))
        ).status,
      ).toBe(403);
    },
  );

  it('filters by user, kind and date, newest first, in pages that follow the cursor', async () => {
    const admin = await demo.auth('admin');
    const users = await request(demo.t.app).get('/api/users').set(admin);
    const engineer = users.body.users.find((u: { role: string }) => u.role === 'engineer');
    const byUser = await request(demo.t.app)
      .get(`/api/audit?userId=${engineer.id}&kind=study&limit=500`)
      .set(admin);
    expect(byUser.status).toBe(200);
    expect(byUser.body.events.length).toBeGreaterThanOrEqual(31);
    expect(
      byUser.body.events.every(
        (e: { actorId: number; action: string }) =>
          e.actorId === engineer.id && e.action.startsWith('study.'),
      ),
    ).toBe(true);
    const ids = byUser.body.events.map((e: { id: number }) => e.id);
    expect(ids).toEqual([...ids].sort((a: number, b: number) => b - a));

    const seen: number[] = [];
    let cursor: string | null = null;
    for (let page = 0; page < 20; page++) {
      const res: request.Response = await request(demo.t.app)
        .get(
          `/api/audit?userId=${engineer.id}&kind=study&limit=7${cursor ? `&cursor=${cursor}` : ''}`,
        )
        .set(admin);
      expect(res.body.events.length).toBeLessThanOrEqual(7);
      seen.push(...res.body.events.map((e: { id: number }) => e.id));
      cursor = res.body.nextCursor;
      if (!cursor) break;
    }
    expect(seen).toEqual(ids);

    const today = new Date().toISOString().slice(0, 10);
    const dated = await request(demo.t.app)
      .get(`/api/audit?from=${today}&to=${today}&limit=1`)
      .set(admin);
    expect(dated.body.events).toHaveLength(1);
    const none = await request(demo.t.app)
      .get('/api/audit?from=2001-01-01&to=2001-01-02')
      .set(admin);
    expect(none.body).toEqual({ events: [], nextCursor: null });
    const bad = await request(demo.t.app).get('/api/audit?kind=DROP%20TABLE').set(admin);
    expect(bad.status).toBe(400);
  });

  it('names the first broken link when a row is edited in SQL', async () => {
    const { rows } = await demo.t.db.pool.query(
      `SELECT id FROM audit_events WHERE action = 'study.create' ORDER BY id LIMIT 1 OFFSET 3`,
    );
    const victim = Number(rows[0].id);
    await demo.t.db.pool.query(
      `UPDATE audit_events SET details = jsonb_set(details, '{title}', '"Quietly renamed"') WHERE id = $1`,
      [victim],
    );
    const v = await verify();
    expect(v.body.ok).toBe(false);
    expect(v.body.firstBroken).toMatchObject({ id: victim, reason: 'content-changed' });
    expect(v.body.firstBroken.message).toContain(`Event ${victim}`);
    expect((await recomputeInJs()).at).toBe(victim);
  });

  it('names the row after a deleted one, even when the edited row is restored', async () => {
    const { rows } = await demo.t.db.pool.query(
      `SELECT id FROM audit_events ORDER BY id LIMIT 3 OFFSET 1`,
    );
    const [deleted, next] = [Number(rows[0].id), Number(rows[1].id)];
    await demo.t.db.pool.query('DELETE FROM audit_events WHERE id = $1', [deleted]);
    const v = await verify();
    expect(v.body.ok).toBe(false);
    expect(v.body.firstBroken).toMatchObject({ id: next, reason: 'link-broken' });
  });
});
