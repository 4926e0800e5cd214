import type { Request, Response } from 'express';
import type pg from 'pg';
import { Readable } from 'node:stream';
import multer from 'multer';
import Papa from 'papaparse';
import { Capture, Checkpoint, Dut } from '../models/index.js';
import { AppError, ValidationError } from '../errors.js';
import { parse } from '../middleware/validate.js';
import {
  CaptureImportFields,
  ImportLineError,
  ImportReader,
  guessDelimiter,
  MAX_IMPORT_BYTES,
  quantityOfUnit,
  type CaptureImportResult,
  type ImportProgress,
} from '../../shared/protocol/importCsv.js';
import { MAX_BATCH, type ReadingIn } from '../../shared/protocol/captures.js';
import type { LiveHub } from './liveHub.js';
import type { AuthUser } from './auth.js';
import { createCapture } from './captures.js';
import { ingestReadings } from './ingest.js';
import { finishCapture } from './finish.js';
import type { AnalysisPool } from '../analysis/pool.js';
import { assertStudyWritable } from './studyLock.js';

/** Progress of running imports by the client's key; kept a few minutes after the end. */
const progress = new Map<string, ImportProgress & { userId: number; touched: number }>();
const PROGRESS_TTL_MS = 10 * 60_000;

function track(key: string | undefined, userId: number, p: Partial<ImportProgress>): void {
  if (!key) return;
  const now = Date.now();
  const old = progress.get(key);
  progress.set(key, { phase: 'receiving', rows: 0, stored: 0, ...old, ...p, userId, touched: now });
  if (progress.size > 200) {
    for (const [k, v] of progress) if (now - v.touched > PROGRESS_TTL_MS) progress.delete(k);
  }
}

/**
 * A running or recent import's progress, for the user who started it. A key this user has no
 * import under answers phase 'unknown' (the client may poll before the server has seen the file).
 */
export function importProgress(key: string, user: Pick<AuthUser, 'id'>): ImportProgress {
  const p = progress.get(key);
  if (!p || p.userId !== user.id) return { phase: 'unknown', rows: 0, stored: 0 };
  return { phase: p.phase, rows: p.rows, stored: p.stored };
}

interface Parsed {
  reader: ImportReader;
  fields: CaptureImportFields;
  dut: Dut;
  fileName: string;
  lines: number;
}

/**
 * A multer storage engine that never stores the file: it streams it through papaparse into an
 * ImportReader as it arrives, so a million-row file is read while it uploads and a bad line stops
 * the upload at once. The form fields must come before the file (browsers and curl send them in
 * the order given).
 */
class ParseEngine implements multer.StorageEngine {
  result: Parsed | null = null;
  constructor(private readonly user: AuthUser) {}

  _handleFile(
    req: Request,
    file: Express.Multer.File,
    cb: (error?: unknown, info?: Partial<Express.Multer.File>) => void,
  ): void {
    this.start(req, file).then(
      (parsed) => {
        this.result = parsed;
        cb(null, { size: parsed.lines });
      },
      (err: unknown) => {
        file.stream.resume();
        cb(err);
      },
    );
  }

  _removeFile(_req: Request, _file: Express.Multer.File, cb: (error: Error | null) => void): void {
    cb(null);
  }

  private async start(req: Request, file: Express.Multer.File): Promise<Parsed> {
    if (file.fieldname !== 'file')
      throw new ValidationError(
        `${file.fieldname}: unexpected file field; send the file as "file"`,
      );
    const fields = parse(CaptureImportFields, req.body ?? {});
    const dut = await Dut.findByPk(fields.dutId);
    if (!dut)
      throw new ValidationError('dutId: no such DUT', [{ path: 'dutId', message: 'no such DUT' }]);
    // Checked again by createCapture; here so a wrong form fails before a large file is read.
    const checkpoint = await Checkpoint.findByPk(fields.checkpointId);
    if (!checkpoint || checkpoint.studyId !== dut.studyId) {
      throw new ValidationError("checkpointId: no such checkpoint in the DUT's study", [
        { path: 'checkpointId', message: "not a checkpoint of the DUT's study" },
      ]);
    }
    await assertStudyWritable('dut', dut.id, 'importing a capture');
    const reader = new ImportReader({
      timeColumn: fields.timeColumn,
      valueColumn: fields.valueColumn,
      timeFormat: fields.timeFormat,
      unit: fields.unit,
      decimalSeparator: fields.decimalSeparator,
      skipLines: fields.skipLines,
      tau0: fields.gateTime + (fields.deadTime ?? 0),
      dutUnit: dut.unit,
    });
    const key = fields.progressKey;
    track(key, this.user.id, { phase: 'receiving', rows: 0, stored: 0 });
    // The delimiter is guessed from the first 64 kB (the header block included), then the whole
    // stream — those bytes first — goes through papaparse.
    const head = await readHead(file.stream, 65_536);
    const delimiter =
      fields.delimiter === 'auto'
        ? guessDelimiter(head.toString('utf8'), fields.decimalSeparator)
        : fields.delimiter;
    const input = Readable.from(
      (async function* () {
        if (head.length) yield head;
        for await (const chunk of file.stream) yield chunk as Buffer;
      })(),
    );
    const lines = await new Promise<number>((resolve, reject) => {
      let line = 0;
      let failed = false;
      Papa.parse<string[]>(input, {
        delimiter,
        skipEmptyLines: false,
        step: (row, parser) => {
          if (failed) return;
          line++;
          try {
            reader.push(row.data, line);
          } catch (err) {
            failed = true;
            parser.abort();
            reject(err);
            return;
          }
          if ((line & 0xffff) === 0) track(key, this.user.id, { rows: reader.count });
        },
        complete: () => {
          if (!failed) resolve(line);
        },
        error: (err: Error) => {
          if (!failed) reject(new ValidationError(`file: ${err.message}`));
        },
      });
    });
    reader.finish(lines);
    track(key, this.user.id, { rows: reader.count });
    return { reader, fields, dut, fileName: file.originalname, lines };
  }
}

/** Reads at least `bytes` bytes (or the whole stream when shorter) and returns them. */
async function readHead(stream: Readable, bytes: number): Promise<Buffer> {
  const chunks: Buffer[] = [];
  let size = 0;
  while (size < bytes) {
    const chunk = await new Promise<Buffer | null>((resolve, reject) => {
      const done = () => {
        cleanup();
        resolve(null);
      };
      const fail = (err: Error) => {
        cleanup();
        reject(err);
      };
      const data = (c: Buffer) => {
        cleanup();
        stream.pause();
        resolve(c);
      };
      const cleanup = () => {
        stream.off('end', done);
        stream.off('error', fail);
        stream.off('data', data);
      };
      if (stream.readableEnded) return resolve(null);
      stream.on('end', done);
      stream.on('error', fail);
      stream.on('data', data);
      stream.resume();
    });
    if (!chunk) break;
    chunks.push(chunk);
    size += chunk.length;
  }
  return Buffer.concat(chunks);
}

function lineError(err: ImportLineError): ValidationError {
  return new ValidationError(err.message, err.problem);
}

/**
 * `POST /api/captures/import`: a CSV or TSV file of readings logged elsewhere becomes an ordinary
 * capture — opened with the same rules as the bench's (`createCapture`: study lock, reference
 * offset copied), its readings stored through the bench's ingest path in batches, then finished
 * (summary, tiles, seal). The whole file is read and checked before anything is stored; a failure
 * while storing deletes the half-made capture, so a refused import leaves nothing behind.
 */
export async function importCapture(
  pool: pg.Pool,
  hub: LiveHub,
  user: AuthUser,
  req: Request,
  res: Response,
  analysis?: AnalysisPool,
): Promise<CaptureImportResult> {
  if (!req.is('multipart/form-data')) {
    throw new ValidationError(
      'Send the file as multipart/form-data: the fields first, then "file".',
    );
  }
  const engine = new ParseEngine(user);
  const upload = multer({
    storage: engine,
    limits: { fileSize: MAX_IMPORT_BYTES, files: 1, fields: 40, fieldSize: 10_000 },
  }).single('file');
  let key: string | undefined;
  try {
    await new Promise<void>((resolve, reject) =>
      upload(req, res, (err?: unknown) => (err ? reject(err) : resolve())),
    );
  } catch (err) {
    key = typeof req.body?.progressKey === 'string' ? req.body.progressKey : undefined;
    track(key, user.id, { phase: 'failed' });
    if (err instanceof ImportLineError) throw lineError(err);
    if (err instanceof multer.MulterError) {
      if (err.code === 'LIMIT_FILE_SIZE')
        throw new AppError(
          413,
          'too-large',
          `The file is larger than ${MAX_IMPORT_BYTES / 1024 / 1024} MB.`,
        );
      throw new ValidationError(`${err.field ?? 'form'}: ${err.message}`);
    }
    throw err;
  }
  const parsed = engine.result;
  if (!parsed)
    throw new ValidationError('file: required (multipart field "file", after the other fields)', [
      { path: 'file', message: 'required' },
    ]);
  const { reader, fields, dut } = parsed;
  key = fields.progressKey;
  const created = await createCapture(
    {
      dutId: fields.dutId,
      checkpointId: fields.checkpointId,
      quantity: quantityOfUnit(dut.unit),
      unit: dut.unit,
      gateTime: fields.gateTime,
      deadTime: fields.deadTime,
      referenceId: fields.referenceId,
      instrumentId: fields.instrumentId,
      ambientC: fields.ambientC,
      notes: fields.notes ?? `Imported from ${parsed.fileName || 'a file'}.`,
      tags: ['imported'],
    },
    user,
  );
  const id = created.id;
  try {
    track(key, user.id, { phase: 'storing', rows: reader.count, stored: 0 });
    if (reader.startEpochMs !== null) {
      await Capture.update({ startedAt: new Date(reader.startEpochMs) }, { where: { id } });
    }
    const t = reader.times;
    const v = reader.values;
    for (let from = 0; from < reader.count; from += MAX_BATCH) {
      const to = Math.min(reader.count, from + MAX_BATCH);
      const batch: ReadingIn[] = new Array(to - from);
      for (let i = from; i < to; i++) batch[i - from] = { seq: i, t: t[i], value: v[i] };
      await ingestReadings(pool, hub, user, id, { readings: batch });
      track(key, user.id, { stored: to });
    }
    track(key, user.id, { phase: 'finishing' });
    await finishCapture(pool, hub, user, id, analysis);
  } catch (err) {
    track(key, user.id, { phase: 'failed' });
    await pool.query('DELETE FROM captures WHERE id = $1', [id]).catch(() => {});
    throw err;
  }
  track(key, user.id, { phase: 'done' });
  return { id, readings: reader.count };
}
