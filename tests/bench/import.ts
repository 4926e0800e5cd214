import os from 'node:os';
import http from 'node:http';
import { millionRowFile } from '../helpers/importFiles.js';
import { startBenchServer, type BenchServer } from './server.js';

// The CSV import of issue 12 against a real server process and PostgreSQL: one 1,000,000-row
// file posted as multipart, timed from the first byte sent to the 201 (parse, ingest, finish, seal).

/** A multipart POST with node:http that reports the answer even when it comes before the upload ends. */
function postMultipart(
  url: string,
  token: string,
  fields: Record<string, string>,
  filename: string,
  file: Buffer,
): Promise<{ status: number; body: string }> {
  const boundary = `----driftbench${Date.now()}`;
  const head = Object.entries(fields)
    .map(([k, v]) => `--${boundary}\r\nContent-Disposition: form-data; name="${k}"\r\n\r\n${v}\r\n`)
    .join('');
  const fileHead = `--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="${filename}"\r\nContent-Type: text/csv\r\n\r\n`;
  const payload = Buffer.concat([
    Buffer.from(head + fileHead),
    file,
    Buffer.from(`\r\n--${boundary}--\r\n`),
  ]);
  return new Promise((resolve, reject) => {
    const req = http.request(url, {
      method: 'POST',
      headers: {
        authorization: `Bearer ${token}`,
        'content-type': `multipart/form-data; boundary=${boundary}`,
        'content-length': payload.length,
      },
    });
    req.on('response', (res) => {
      let body = '';
      res.setEncoding('utf8');
      res.on('data', (d: string) => (body += d));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, body }));
    });
    req.on('error', (err) => reject(err));
    req.end(payload);
  });
}

export async function benchImport(rows = 1_000_000): Promise<void> {
  let bench: BenchServer | undefined;
  try {
    bench = await startBenchServer();
    const { base } = bench;
    const token = await bench.token('technician');
    const headers = { authorization: `Bearer ${token}` };
    const studyRes = await fetch(`${base}/api/studies/1`, { headers });
    if (!studyRes.ok)
      throw new Error(`GET /api/studies/1 answered ${studyRes.status}: ${await studyRes.text()}`);
    const study = (await studyRes.json()) as {
      duts: { id: number; unit: string }[];
      checkpoints: { id: number }[];
    };
    const dut = study.duts.find((d) => d.unit === 'Hz')!;
    // A small file first: checks the route answers before the large one is sent.
    const probe = new FormData();
    probe.append('dutId', String(dut.id));
    probe.append('checkpointId', String(study.checkpoints[0].id));
    probe.append('gateTime', '0.1');
    probe.append('file', new Blob([millionRowFile(100)], { type: 'text/csv' }), 'probe.csv');
    const first = await fetch(`${base}/api/captures/import`, {
      method: 'POST',
      headers,
      body: probe,
    });
    if (first.status !== 201)
      throw new Error(`import of 100 rows answered ${first.status}: ${await first.text()}`);
    const text = millionRowFile(rows);
    const fields = {
      dutId: String(dut.id),
      checkpointId: String(study.checkpoints[0].id),
      gateTime: '0.1',
    };
    const t0 = performance.now();
    // node:http rather than fetch: Node 20's fetch broke the pipe on this 22 MB body while the
    // server was still reading it (observed here; the browser and Supertest upload it fine).
    const res = await postMultipart(
      `${base}/api/captures/import`,
      token,
      fields,
      'million.csv',
      Buffer.from(text),
    );
    const ms = performance.now() - t0;
    if (res.status !== 201) throw new Error(`import answered ${res.status}: ${res.body}`);
    const body = JSON.parse(res.body) as { id: number; readings: number };
    console.log(
      `import: ${body.readings.toLocaleString('en')} rows (${(text.length / 1e6).toFixed(1)} MB CSV) → finished, sealed capture in ${(ms / 1000).toFixed(2)} s (${Math.round(body.readings / (ms / 1000)).toLocaleString('en')} rows/s; load ${os.loadavg()[0].toFixed(1)})`,
    );
  } finally {
    await bench?.stop();
  }
}
