/**
 * An SCPI (IEEE 488.2 style) query loop over an abstract line duplex.
 *
 * The transport is two functions — write bytes, wait for the next framed line — so the same
 * loop runs over Web Serial, the simulator's WebSocket, or a fake in tests. Replies are
 * matched to queries by order; a reply that the caller's `accept` rejects (garbage, a partial
 * line glued to the next one, an unparseable number) is discarded and the query re-sent, after
 * draining whatever else is queued, so one bad line never shifts the pairing of the rest.
 */
import { FrameFlag, type Frame } from './framing';

/** A queue of framed lines with a timed wait; fed by whoever reads the port. */
export interface LineQueue {
  push(frame: Frame): void;
  /** The next line, or null after `timeoutMs` (or once the queue is closed and empty). */
  next(timeoutMs: number): Promise<Frame | null>;
  /** Removes and returns every line waiting (used to re-sync before a query). */
  drain(): Frame[];
  /** No more lines will come: pending and later waits resolve null once the queue is empty. */
  close(): void;
  readonly closed: boolean;
}

/** Creates a {@link LineQueue}. */
export function createLineQueue(): LineQueue {
  const frames: Frame[] = [];
  let waiter: ((f: Frame | null) => void) | null = null;
  let closed = false;
  return {
    push(frame) {
      if (closed) return;
      if (waiter) {
        const w = waiter;
        waiter = null;
        w(frame);
      } else frames.push(frame);
    },
    next(timeoutMs) {
      if (frames.length > 0) return Promise.resolve(frames.shift()!);
      if (closed) return Promise.resolve(null);
      if (waiter) return Promise.reject(new Error('LineQueue supports one reader at a time'));
      return new Promise<Frame | null>((resolve) => {
        const timer = setTimeout(() => {
          if (waiter === done) waiter = null;
          resolve(null);
        }, timeoutMs);
        const done = (f: Frame | null) => {
          clearTimeout(timer);
          resolve(f);
        };
        waiter = done;
      });
    },
    drain() {
      return frames.splice(0, frames.length);
    },
    close() {
      closed = true;
      if (waiter) {
        const w = waiter;
        waiter = null;
        w(null);
      }
    },
    get closed() {
      return closed;
    },
  };
}

export interface ScpiTransport {
  write(bytes: Uint8Array): Promise<void>;
  lines: LineQueue;
}

export interface QueryOptions {
  /** Time allowed for each attempt's reply (default: the client's). */
  timeoutMs?: number;
  /** Extra attempts after the first (default: the client's). */
  retries?: number;
  /** Accepts or rejects a reply line; rejected lines are discarded. Default: no garbage bytes. */
  accept?: (frame: Frame) => boolean;
}

export interface ScpiClientOptions {
  /** Program message terminator sent after each command (IEEE 488.2: LF). Default `\n`. */
  writeTerminator?: string;
  timeoutMs?: number;
  retries?: number;
}

export class ScpiTimeoutError extends Error {
  constructor(
    readonly command: string,
    readonly attempts: number,
    readonly discarded: string[],
  ) {
    super(`no usable reply to "${command}" after ${attempts} attempt(s)`);
    this.name = 'ScpiTimeoutError';
  }
}

/** An SCPI error-queue entry as `:SYST:ERR?` answers it: `-113,"Undefined header"`. */
export interface ScpiError {
  code: number;
  message: string;
}

/** Parses a `:SYST:ERR?` reply; null if the line is not in that form. */
export function parseScpiError(line: string): ScpiError | null {
  const m = /^\s*([+-]?\d+)\s*,\s*"(.*)"\s*$/.exec(line);
  return m ? { code: Number(m[1]), message: m[2] } : null;
}

export interface PollResult {
  /** Milliseconds (transport clock) when the query was sent. */
  sentAt: number;
  /** The reply line, or null if the query timed out after its retries. */
  frame: Frame | null;
  /** Lines received and thrown away on the way (garbage, stale or rejected replies). */
  discarded: string[];
  error?: ScpiTimeoutError;
}

export interface PollOptions extends QueryOptions {
  /** Minimum time between the starts of two queries (0: back-to-back). */
  intervalMs: number;
  signal?: AbortSignal;
  now?: () => number;
}

export interface ScpiClient {
  /** Sends a command that expects no reply. */
  send(command: string): Promise<void>;
  /** Sends a query and resolves with its reply line's text; throws ScpiTimeoutError. */
  query(command: string, options?: QueryOptions): Promise<string>;
  /** Like query, but resolves with the whole frame (flags included). */
  queryFrame(command: string, options?: QueryOptions): Promise<Frame>;
  /** Repeats `command` at an interval until aborted or the line queue closes. */
  poll(command: string, options: PollOptions): AsyncGenerator<PollResult>;
}

const defaultAccept = (f: Frame) => (f.flags & (FrameFlag.garbage | FrameFlag.overlong)) === 0;

/** Creates an SCPI client over a transport (see the module comment). */
export function createScpiClient(
  transport: ScpiTransport,
  options: ScpiClientOptions = {},
): ScpiClient {
  const term = options.writeTerminator ?? '\n';
  const enc = new TextEncoder();
  const baseTimeout = options.timeoutMs ?? 2000;
  const baseRetries = options.retries ?? 2;
  let chain: Promise<unknown> = Promise.resolve(); // one exchange on the line at a time

  function exclusive<T>(fn: () => Promise<T>): Promise<T> {
    const run = chain.then(fn, fn);
    chain = run.catch(() => undefined);
    return run;
  }

  async function send(command: string): Promise<void> {
    await transport.write(enc.encode(command + term));
  }

  async function exchange(
    command: string,
    opts: QueryOptions,
  ): Promise<{ frame: Frame; discarded: string[] }> {
    const timeoutMs = opts.timeoutMs ?? baseTimeout;
    const retries = opts.retries ?? baseRetries;
    const accept = opts.accept ?? defaultAccept;
    const discarded: string[] = [];
    for (let attempt = 0; attempt <= retries; attempt++) {
      for (const stale of transport.lines.drain()) discarded.push(stale.text);
      await send(command);
      const frame = await transport.lines.next(timeoutMs);
      if (frame && accept(frame)) return { frame, discarded };
      if (frame) discarded.push(frame.text);
      if (transport.lines.closed) break;
    }
    throw new ScpiTimeoutError(command, retries + 1, discarded);
  }

  const client: ScpiClient = {
    send: (command) => exclusive(() => send(command)),
    queryFrame: async (command, opts = {}) =>
      (await exclusive(() => exchange(command, opts))).frame,
    query: async (command, opts = {}) => (await client.queryFrame(command, opts)).text,
    async *poll(command, opts) {
      const now = opts.now ?? (() => Date.now());
      while (!opts.signal?.aborted && !transport.lines.closed) {
        const sentAt = now();
        let result: PollResult;
        try {
          const { frame, discarded } = await exclusive(() => exchange(command, opts));
          result = { sentAt, frame, discarded };
        } catch (err) {
          if (!(err instanceof ScpiTimeoutError)) throw err;
          if (transport.lines.closed) return;
          result = { sentAt, frame: null, discarded: err.discarded, error: err };
        }
        yield result;
        const wait = opts.intervalMs - (now() - sentAt);
        if (wait > 0 && !opts.signal?.aborted) await sleep(wait, opts.signal);
      }
    },
  };
  return client;
}

function sleep(ms: number, signal?: AbortSignal): Promise<void> {
  return new Promise((resolve) => {
    const timer = setTimeout(done, ms);
    function done() {
      clearTimeout(timer);
      signal?.removeEventListener('abort', done);
      resolve();
    }
    signal?.addEventListener('abort', done, { once: true });
  });
}
