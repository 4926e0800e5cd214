import { createReadStream, createWriteStream } from 'node:fs';
import { mkdir, rm, stat } from 'node:fs/promises';
import path from 'node:path';
import type { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';

/**
 * Where attachment bytes live. The database keeps the metadata (name, type, size, SHA-256,
 * uploader) and a storage key; the bytes go through this interface only, so an object store can
 * replace the folder later by implementing the same four methods.
 */
export interface BlobStore {
  /** Writes the stream under `key` (a new key each time; never overwrites). */
  put(key: string, body: Readable): Promise<void>;
  /** A stream of the bytes under `key`; rejects with code 'ENOENT' when absent. */
  get(key: string): Promise<Readable>;
  delete(key: string): Promise<void>;
  exists(key: string): Promise<boolean>;
}

const KEY = /^[a-z0-9][a-z0-9/_-]{0,190}$/;

/** Blobs as files under one folder (by default `<data folder>/attachments`). */
export class FolderStore implements BlobStore {
  constructor(readonly root: string) {}

  private file(key: string): string {
    if (!KEY.test(key) || key.includes('..')) throw new Error(`unsafe storage key: ${key}`);
    return path.join(this.root, ...key.split('/'));
  }

  async put(key: string, body: Readable): Promise<void> {
    const file = this.file(key);
    await mkdir(path.dirname(file), { recursive: true, mode: 0o750 });
    try {
      await pipeline(body, createWriteStream(file, { flags: 'wx', mode: 0o640 }));
    } catch (err) {
      await rm(file, { force: true });
      throw err;
    }
  }

  async get(key: string): Promise<Readable> {
    const file = this.file(key);
    await stat(file);
    return createReadStream(file);
  }

  async delete(key: string): Promise<void> {
    await rm(this.file(key), { force: true });
  }

  async exists(key: string): Promise<boolean> {
    try {
      await stat(this.file(key));
      return true;
    } catch {
      return false;
    }
  }
}
