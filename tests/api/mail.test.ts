import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { useDemoApp } from '../helpers/demoApp.js';
import { capture, plannedStudy } from '../helpers/review.js';
import { DEMO_DOMAIN, DEMO_PASSWORD } from '../../server/db/seed.js';
import {
  startLocalMail,
  parseMessage,
  type LocalMailService,
} from '../../server/services/localMail.js';
import {
  MAX_ATTEMPTS,
  retryDelayMs,
  startMailWorker,
  transportFor,
  type MailWorker,
} from '../../server/services/mail.js';
import { runSchedules } from '../../server/services/schedules.js';
import { freePort } from '../../server/db/cluster.js';

const demo = useDemoApp();
let local: LocalMailService;
let worker: MailWorker;

beforeAll(async () => {
  local = await startLocalMail(demo.t.db.pool);
  // Driven by the test: no timer, no nudges.
  worker = startMailWorker({ transport: transportFor(local.url), autoStart: false });
});
afterAll(async () => {
  await worker.stop();
  await local.close();
});

const received = async () =>
  (
    await request(demo.t.app)
      .get('/api/outbox/received?limit=500')
      .set(await demo.auth('admin'))
  ).body.messages as Array<{ to: string; subject: string; text: string; from: string }>;
const outbox = async (q = '') =>
  (
    await request(demo.t.app)
      .get(`/api/outbox${q}`)
      .set(await demo.auth('admin'))
  ).body.messages as Array<Record<string, unknown>>;

describe('e-mail through the local mail service', () => {
  it('mails the leads when a study is submitted, and the local service stores what it received', async () => {
    const plan = await plannedStudy(demo.t, 'Mailed study — ünïcode title');
    await capture(demo.t, plan);
    await request(demo.t.app)
      .post(`/api/studies/${plan.studyId}/submit`)
      .set(await demo.auth('engineer'))
      .send({ note: 'Ready when you are.' });
    const queued = await outbox();
    expect(queued[0]).toMatchObject({
      kind: 'study-submitted',
      to: `lead@${DEMO_DOMAIN}`,
      status: 'queued',
      sentAt: null,
    });
    expect(await worker.deliverDue()).toEqual({ sent: 1, failed: 0 });
    const got = await received();
    expect(got[0].to).toBe(`lead@${DEMO_DOMAIN}`);
    expect(got[0].subject).toBe(
      'Driftbench: “Mailed study — ünïcode title” is waiting for your review',
    );
    expect(got[0].text).toContain('Emil Engineer submitted study');
    expect(got[0].text).toContain('Their note: Ready when you are.');
    const sent = await outbox();
    expect(sent[0]).toMatchObject({ status: 'sent', attempts: 1 });
    expect(new Date(sent[0].sentAt as string).getTime()).not.toBeNaN();

    // Returned → the submitter hears it, with the comment.
    await request(demo.t.app)
      .post(`/api/studies/${plan.studyId}/return`)
      .set(await demo.auth('lead'))
      .send({ comment: 'Please add the bake checkpoint.' });
    await worker.deliverDue();
    const back = (await received())[0];
    expect(back.to).toBe(`engineer@${DEMO_DOMAIN}`);
    expect(back.subject).toContain('was returned');
    expect(back.text).toContain('Please add the bake checkpoint.');

    // Approved → the submitter again.
    await request(demo.t.app)
      .post(`/api/studies/${plan.studyId}/submit`)
      .set(await demo.auth('engineer'))
      .send({});
    await request(demo.t.app)
      .post(`/api/studies/${plan.studyId}/approve`)
      .set(await demo.auth('lead'))
      .send({ password: DEMO_PASSWORD });
    await worker.deliverDue();
    const approved = (await received()).find((m) => m.subject.includes('was approved'));
    expect(approved?.to).toBe(`engineer@${DEMO_DOMAIN}`);
  });

  it('retries a failed delivery with backoff, visibly, and delivers once the server answers', async () => {
    const deadPort = await freePort();
    const dead = startMailWorker({
      transport: transportFor(`smtp://127.0.0.1:${deadPort}`),
      autoStart: false,
    });
    const plan = await plannedStudy(demo.t, 'Mail outage study');
    await capture(demo.t, plan);
    await request(demo.t.app)
      .post(`/api/studies/${plan.studyId}/submit`)
      .set(await demo.auth('engineer'))
      .send({});
    const t0 = new Date();
    expect(await dead.deliverDue(t0)).toEqual({ sent: 0, failed: 1 });
    const [m] = await outbox('?status=retrying');
    expect(m).toMatchObject({ status: 'retrying', attempts: 1, sentAt: null });
    expect(m.lastError).toMatch(/ECONNREFUSED|connect/i);
    const next = new Date(m.nextAttemptAt as string).getTime();
    // First retry after 30 s (common practice, no source: the schedule is our own choice, docs/record.md).
    expect(next - t0.getTime()).toBeGreaterThanOrEqual(retryDelayMs(1) - 1000);
    // Not due yet: nothing is attempted.
    expect(await dead.deliverDue(new Date(t0.getTime() + 1000))).toEqual({ sent: 0, failed: 0 });
    expect(await dead.deliverDue(new Date(next + 1))).toEqual({ sent: 0, failed: 1 });
    const [m2] = await outbox('?status=retrying');
    expect(m2.attempts).toBe(2);
    expect(new Date(m2.nextAttemptAt as string).getTime() - (next + 1)).toBeGreaterThanOrEqual(
      retryDelayMs(2) - 1000,
    );
    await dead.stop();
    // The server is back: the message goes out on its next due attempt.
    expect(await worker.deliverDue(new Date(Date.now() + 3_600_000))).toEqual({
      sent: 1,
      failed: 0,
    });
    const sent = (await outbox()).find((x) => x.id === m.id)!;
    expect(sent).toMatchObject({ status: 'sent', attempts: 3, lastError: null });
  });

  it('gives up after the last attempt but keeps the message as failed, and an admin can retry it', async () => {
    const deadPort = await freePort();
    const dead = startMailWorker({
      transport: transportFor(`smtp://127.0.0.1:${deadPort}`),
      autoStart: false,
    });
    const plan = await plannedStudy(demo.t, 'Mail never delivered');
    await capture(demo.t, plan);
    await request(demo.t.app)
      .post(`/api/studies/${plan.studyId}/submit`)
      .set(await demo.auth('engineer'))
      .send({});
    let now = Date.now();
    for (let i = 0; i < MAX_ATTEMPTS; i++) {
      await dead.deliverDue(new Date(now));
      now += 2 * 3_600_000;
    }
    await dead.stop();
    const [failed] = await outbox('?status=failed');
    expect(failed).toMatchObject({ status: 'failed', attempts: MAX_ATTEMPTS });
    const retry = await request(demo.t.app)
      .post(`/api/outbox/${failed.id}/retry`)
      .set(await demo.auth('admin'));
    expect(retry.status).toBe(202);
    expect(await worker.deliverDue()).toEqual({ sent: 1, failed: 0 });
  });

  it('mails admins about calibrations due within 30 days or overdue, once a day', async () => {
    const today = new Date('2031-05-10T06:00:00Z');
    await demo.t.db.pool.query(`UPDATE instruments SET calibration_due = NULL`);
    await demo.t.db.pool.query(
      `UPDATE instruments SET calibration_due = '2031-05-01' WHERE id = (SELECT min(id) FROM instruments)`,
    );
    await demo.t.db.pool.query(
      `UPDATE instruments SET calibration_due = '2031-06-01' WHERE id = (SELECT max(id) FROM instruments)`,
    );
    const first = await runSchedules(today);
    expect(first.calibration).toBe(2);
    expect((await runSchedules(new Date('2031-05-10T18:00:00Z'))).calibration).toBe(0);
    await worker.deliverDue();
    const mails = (await received()).filter((m) => m.subject.includes('calibration'));
    expect(mails.map((m) => m.to)).toEqual([`admin@${DEMO_DOMAIN}`, `admin@${DEMO_DOMAIN}`]);
    expect(
      mails.some(
        (m) =>
          m.subject.includes('is overdue') &&
          m.text.includes('was due on 2031-05-01 (9 day(s) ago)'),
      ),
    ).toBe(true);
    expect(
      mails.some((m) => m.subject.includes('is due soon') && m.text.includes('in 22 day(s)')),
    ).toBe(true);
    expect((await runSchedules(new Date('2031-05-11T06:00:00Z'))).calibration).toBe(2);
  });

  it('mails the operator once when a capture stays open past its planned time', async () => {
    const plan = await plannedStudy(demo.t, 'Overdue capture study');
    const c = await request(demo.t.app)
      .post('/api/captures')
      .set(await demo.auth('technician'))
      .send(
        demo.captureBody({
          dutId: plan.dutId,
          checkpointId: plan.checkpointId,
          plannedMinutes: 30,
        }),
      );
    expect(c.body.plannedMinutes).toBe(30);
    const started = new Date(c.body.startedAt).getTime();
    expect((await runSchedules(new Date(started + 29 * 60_000))).overdueCaptures).toBe(0);
    expect((await runSchedules(new Date(started + 31 * 60_000))).overdueCaptures).toBe(1);
    expect((await runSchedules(new Date(started + 90 * 60_000))).overdueCaptures).toBe(0);
    await worker.deliverDue();
    const m = (await received()).find((x) => x.subject.includes(`capture #${c.body.id}`));
    expect(m?.to).toBe(`technician@${DEMO_DOMAIN}`);
    expect(m?.text).toContain('planned to run 30 minute(s)');
  });

  it.each(['lead', 'engineer', 'technician', 'viewer'])(
    'keeps the outbox for admins: 403 for the %s',
    async (role) => {
      expect(
        (
          await request(demo.t.app)
            .get('/api/outbox')
            .set(await demo.auth(role))
        ).status,
      ).toBe(403);
      expect(
        (
          await request(demo.t.app)
            .get('/api/outbox/received')
            .set(await demo.auth(role))
        ).status,
      ).toBe(403);
    },
  );
});

describe('the local service reads messages as nodemailer writes them', () => {
  it('decodes encoded-word subjects and quoted-printable bodies (RFC 2047, RFC 2045 §6.7 examples of our own)', () => {
    const raw =
      'To: a@example.org\r\nSubject: =?UTF-8?Q?Caf=C3=A9_report?=\r\nContent-Type: text/plain; charset=utf-8\r\n' +
      'Content-Transfer-Encoding: quoted-printable\r\n\r\nNa=C3=AFve line that is long enough to be softly =\r\nwrapped.\r\n';
    expect(parseMessage(raw)).toMatchObject({
      subject: 'Café report',
      text: 'Naïve line that is long enough to be softly wrapped.',
    });
  });
});
