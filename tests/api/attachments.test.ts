import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { createHash } from 'node:crypto';
import { mkdtempSync, readdirSync, rmSync, statSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Express } from 'express';
import { FolderStore } from '../../server/services/storage.js';
import { useDemoApp } from '../helpers/demoApp.js';
import { capture, plannedStudy } from '../helpers/review.js';

const demo = useDemoApp();
let app: Express;
let small: Express;
let root: string;
let plan: Awaited<ReturnType<typeof plannedStudy>>;

// A 1×1 PNG's first bytes: the 8-byte signature and the IHDR chunk header (PNG specification §5.2, §11.2.2).
const PNG = Buffer.from(
  '89504e470d0a1a0a0000000d49484452000000010000000108060000001f15c489',
  'hex',
);
const PDF = Buffer.from(
  '%PDF-1.4\n%\u00e2\u00e3\n1 0 obj << >> endobj\ntrailer << >>\n%%EOF\n',
  'latin1',
);

function filesUnder(dir: string): string[] {
  const out: string[] = [];
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = path.join(dir, e.name);
    if (e.isDirectory()) out.push(...filesUnder(p));
    else out.push(p);
  }
  return out;
}

beforeAll(async () => {
  root = mkdtempSync(path.join(os.tmpdir(), 'driftbench-attach-test-'));
  const store = new FolderStore(root);
  app = demo.t.appWith({ attachmentStore: store });
  // The same app with a 2 kB limit and CSV only: the limits are configuration.
  small = demo.t.appWith({
    attachmentStore: store,
    uploadPolicy: { maxBytes: 2048, types: ['text/csv'] },
  });
  plan = await plannedStudy(demo.t, 'Attachments study');
});
afterAll(async () => {
  rmSync(root, { recursive: true, force: true });
});

describe('attachments', () => {
  it('stores an upload on a study under the data folder with sha256, size, type and uploader', async () => {
    const res = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(await demo.auth('technician'))
      .attach('file', PNG, { filename: 'board-top.png', contentType: 'image/png' });
    expect(res.status).toBe(201);
    expect(res.body).toMatchObject({
      studyId: plan.studyId,
      ownerType: 'study',
      ownerId: plan.studyId,
      filename: 'board-top.png',
      contentType: 'image/png',
      size: PNG.length,
      sha256: createHash('sha256').update(PNG).digest('hex'),
      uploaderName: 'Tomas Technician',
    });
    const files = filesUnder(root);
    expect(files.some((f) => statSync(f).size === PNG.length)).toBe(true);
    const audit = await request(app)
      .get(`/api/studies/${plan.studyId}/audit`)
      .set(await demo.auth('viewer'));
    const ev = audit.body.events.find((e: { action: string }) => e.action === 'attachment.upload');
    expect(ev.details.after).toMatchObject({ filename: 'board-top.png', size: PNG.length });
  });

  it('attaches to a checkpoint and to a capture, and lists them with the study', async () => {
    const cap = await capture(demo.t, plan);
    const a = await request(app)
      .post(`/api/checkpoints/${plan.checkpointId}/attachments`)
      .set(await demo.auth('engineer'))
      .attach('file', PDF, { filename: 'printout.pdf', contentType: 'application/pdf' });
    const b = await request(app)
      .post(`/api/captures/${cap}/attachments`)
      .set(await demo.auth('engineer'))
      .attach('file', Buffer.from('seq,value\n0,1\n'), {
        filename: 'export.csv',
        contentType: 'text/csv',
      });
    expect([a.status, b.status]).toEqual([201, 201]);
    const list = await request(app)
      .get(`/api/studies/${plan.studyId}/attachments`)
      .set(await demo.auth('viewer'));
    expect(list.body.attachments.map((x: { filename: string }) => x.filename)).toEqual([
      'export.csv',
      'printout.pdf',
      'board-top.png',
    ]);
    const onCapture = await request(app)
      .get(`/api/captures/${cap}/attachments`)
      .set(await demo.auth('viewer'));
    expect(onCapture.body.attachments).toHaveLength(1);
    expect(
      (
        await request(app)
          .get('/api/captures/999999/attachments')
          .set(await demo.auth('viewer'))
      ).status,
    ).toBe(404);
  });

  it('downloads with the original name in a Content-Disposition that odd names cannot break', async () => {
    const odd = 'rapport "final";\r\nX-Evil: 1 — Ω.csv';
    const up = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(await demo.auth('engineer'))
      .attach('file', Buffer.from('a,b\n1,2\n'), { filename: odd, contentType: 'text/csv' });
    expect(up.status).toBe(201);
    const res = await request(app)
      .get(`/api/attachments/${up.body.id}`)
      .set(await demo.auth('viewer'))
      .buffer(true);
    expect(res.status).toBe(200);
    expect(res.headers['x-evil']).toBeUndefined();
    const cd = res.headers['content-disposition'];
    expect(cd).toMatch(
      /^attachment; filename="[\x20-\x7e]*"; filename\*=UTF-8''[A-Za-z0-9%._~!$&+,;=:@-]+$/,
    );
    expect(decodeURIComponent(cd.split("''")[1])).toBe(up.body.filename);
    expect(up.body.filename).not.toMatch(/[\r\n"]/);
    expect(up.body.filename).toContain('— Ω.csv');
    expect(res.text).toBe('a,b\n1,2\n');
    expect(res.headers['x-content-sha256']).toBe(
      createHash('sha256').update('a,b\n1,2\n').digest('hex'),
    );
  });

  it('refuses a file over the configured size with 413 and keeps nothing', async () => {
    const before = filesUnder(root).length;
    const res = await request(small)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(await demo.auth('engineer'))
      .attach('file', Buffer.alloc(4096, 0x41), { filename: 'big.csv', contentType: 'text/csv' });
    expect(res.status).toBe(413);
    expect(res.body.error.code).toBe('too-large');
    expect(filesUnder(root).length).toBe(before);
  });

  it('refuses types outside the list, names that disagree with the type, and content that is not the type, with 415', async () => {
    const eng = await demo.auth('engineer');
    const exe = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(eng)
      .attach('file', Buffer.from('MZ'), {
        filename: 'tool.exe',
        contentType: 'application/x-msdownload',
      });
    expect(exe.status).toBe(415);
    const html = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(eng)
      .attach('file', Buffer.from('<script>alert(1)</script>'), {
        filename: 'page.html',
        contentType: 'text/html',
      });
    expect(html.status).toBe(415);
    const renamed = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(eng)
      .attach('file', PNG, { filename: 'photo.pdf', contentType: 'image/png' });
    expect(renamed.status).toBe(415);
    const fake = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(eng)
      .attach('file', Buffer.from('not a png at all'), {
        filename: 'fake.png',
        contentType: 'image/png',
      });
    expect(fake.status).toBe(415);
    const pdfOnSmall = await request(small)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(eng)
      .attach('file', PDF, { filename: 'printout.pdf', contentType: 'application/pdf' });
    expect(pdfOnSmall.status).toBe(415);
  });

  it('refuses a request without a file with 400 and uploads by viewers with 403', async () => {
    const none = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(await demo.auth('engineer'))
      .field('note', 'x');
    expect(none.status).toBe(400);
    const viewer = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(await demo.auth('viewer'))
      .attach('file', PNG, { filename: 'v.png', contentType: 'image/png' });
    expect(viewer.status).toBe(403);
  });

  it('lets the uploader or a lead delete, nobody else', async () => {
    const up = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(await demo.auth('technician'))
      .attach('file', PNG, { filename: 'mine.png', contentType: 'image/png' });
    for (const role of ['engineer', 'admin', 'viewer']) {
      const res = await request(app)
        .delete(`/api/attachments/${up.body.id}`)
        .set(await demo.auth(role));
      expect(res.status, role).toBe(403);
    }
    expect(
      (
        await request(app)
          .delete(`/api/attachments/${up.body.id}`)
          .set(await demo.auth('technician'))
      ).status,
    ).toBe(204);
    expect(
      (
        await request(app)
          .get(`/api/attachments/${up.body.id}`)
          .set(await demo.auth('viewer'))
      ).status,
    ).toBe(404);

    const other = await request(app)
      .post(`/api/studies/${plan.studyId}/attachments`)
      .set(await demo.auth('technician'))
      .attach('file', PNG, { filename: 'theirs.png', contentType: 'image/png' });
    const before = filesUnder(root).length;
    expect(
      (
        await request(app)
          .delete(`/api/attachments/${other.body.id}`)
          .set(await demo.auth('lead'))
      ).status,
    ).toBe(204);
    expect(filesUnder(root).length).toBe(before - 1);
    const audit = await request(app)
      .get(`/api/studies/${plan.studyId}/audit`)
      .set(await demo.auth('viewer'));
    expect(
      audit.body.events.filter((e: { action: string }) => e.action === 'attachment.delete'),
    ).toHaveLength(2);
  });
});
