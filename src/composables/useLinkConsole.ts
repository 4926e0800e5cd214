/**
 * The link test page's engine: opens a link (Web Serial or simulator) with a profile, taps the
 * raw bytes both ways, parses readings (talk-only stream or polling), and carries console
 * commands and SPI transfers on the same SCPI client so they interleave with polling instead of
 * fighting over the line. Everything it keeps is bounded (the last few hundred lines).
 */
import { onBeforeUnmount, ref, shallowRef } from 'vue';
import { openScpi, parseLine } from '../links/linkReader';
import { serialOptions, type SerialLink } from '../links/SerialLink';
import { decodeHexLine } from '../../shared/protocol/hex';
import { ReadingFlag, type LinkReading } from '../../shared/protocol/reading';
import type { LinkProfile } from '../../shared/protocol/linkProfile';
import { renderBytes, createRawSplitter, createBoundedBuffer } from '../links/linkConsoleText';
import type { RawLine } from '../links/linkConsoleText';

export type LinkState = 'idle' | 'connecting' | 'connected' | 'lost' | 'failed';

export interface ConsoleExchange {
  id: number;
  command: string;
  reply: string | null;
  /** Milliseconds from send to reply. */
  ms: number;
  error?: string;
}

const KEEP = 500;
const PUBLISH_MS = 100;
const IDLE_FLUSH_MS = 300;

export function useLinkConsole() {
  const state = ref<LinkState>('idle');
  const message = ref<string | null>(null);
  const polling = ref(false);
  /** Listen only (a viewer): nothing is written to the instrument — no start-up commands, polls or console lines. */
  const listenOnly = ref(false);
  const profile = shallowRef<LinkProfile | null>(null);
  const rawLines = shallowRef<RawLine[]>([]);
  const readings = shallowRef<LinkReading[]>([]);
  const exchanges = shallowRef<ConsoleExchange[]>([]);
  const counts = ref({ lines: 0, readings: 0, garbled: 0, timeouts: 0 });

  const raw = createBoundedBuffer<RawLine>(KEEP);
  const got = createBoundedBuffer<LinkReading>(KEEP);
  const said = createBoundedBuffer<ConsoleExchange>(50);
  let rawId = 0;
  let exchangeId = 0;
  let seq = 0;
  let start = 0;
  let publishTimer: ReturnType<typeof setTimeout> | null = null;
  let idleTimer: ReturnType<typeof setTimeout> | null = null;
  let splitter = createRawSplitter();
  let session: ReturnType<typeof openScpi> | null = null;
  let teardown: (() => Promise<void>) | null = null;
  let pollAbort: AbortController | null = null;
  let loopAbort: AbortController | null = null;

  const elapsed = () => (performance.now() - start) / 1000;

  function publish(): void {
    if (publishTimer) return;
    publishTimer = setTimeout(() => {
      publishTimer = null;
      rawLines.value = raw.toArray();
      readings.value = got.toArray();
      exchanges.value = said.toArray();
    }, PUBLISH_MS);
  }

  function addRaw(dir: RawLine['dir'], bytes: Uint8Array, partial = false): void {
    raw.push({ id: ++rawId, dir, t: elapsed(), ...renderBytes(bytes), partial });
    if (dir === 'rx') counts.value.lines++;
    publish();
  }

  function onRx(chunk: Uint8Array): void {
    for (const line of splitter.push(chunk)) addRaw('rx', line);
    if (idleTimer) clearTimeout(idleTimer);
    // A device that never ends its line still shows what it sent.
    idleTimer = setTimeout(() => {
      const rest = splitter.flush();
      if (rest) addRaw('rx', rest, true);
    }, IDLE_FLUSH_MS);
  }

  function addReading(value: number, flags: number, rawText?: string): void {
    got.push({ seq: seq++, t: elapsed(), value, flags, raw: rawText });
    counts.value.readings++;
    if (flags & ReadingFlag.garbled) counts.value.garbled++;
    if (flags & ReadingFlag.timeout) counts.value.timeouts++;
    publish();
  }

  /** Wraps the link so every byte in and out is also shown raw; returns the wrapper and its undo. */
  function tap(link: SerialLink): { tapped: SerialLink; untap: () => Promise<void> } {
    const source = link.readable!;
    const sink = link.writable?.getWriter() ?? null;
    const through = new TransformStream<Uint8Array, Uint8Array>({
      transform(chunk, c) {
        onRx(chunk);
        c.enqueue(chunk);
      },
    });
    const pipe = source.pipeTo(through.writable).catch(() => undefined);
    const out = new WritableStream<Uint8Array>({
      async write(chunk) {
        if (!sink) throw new Error('this link cannot be written to');
        addRaw('tx', chunk);
        await sink.write(chunk);
      },
    });
    const tapped: SerialLink = {
      kind: link.kind,
      readable: through.readable,
      writable: out,
      open: () => Promise.resolve(),
      close: () => Promise.resolve(),
      getInfo: () => link.getInfo(),
      ondisconnect: null,
    };
    return {
      tapped,
      async untap() {
        await through.readable.cancel().catch(() => undefined);
        await pipe;
        sink?.releaseLock();
      },
    };
  }

  async function talkLoop(p: LinkProfile, signal: AbortSignal): Promise<void> {
    const lines = session!.lines;
    while (!signal.aborted && !lines.closed) {
      const frame = await lines.next(p.timeoutMs);
      if (!frame) {
        if (!lines.closed && !signal.aborted) addReading(NaN, ReadingFlag.timeout);
        continue;
      }
      const r = parseLine(frame, p);
      addReading(r.ok ? r.value : NaN, r.flags, frame.text);
    }
  }

  /** Opens `link` with `p`'s serial settings and starts listening (talk-only profiles stream at once). */
  async function connect(link: SerialLink, p: LinkProfile): Promise<void> {
    if (state.value === 'connecting' || state.value === 'connected') await disconnect();
    state.value = 'connecting';
    message.value = null;
    profile.value = p;
    clear();
    try {
      await link.open(serialOptions(p.serial));
    } catch (err) {
      state.value = 'failed';
      message.value = err instanceof Error ? err.message : 'the link could not be opened';
      return;
    }
    start = performance.now();
    splitter = createRawSplitter();
    const { tapped, untap } = tap(link);
    session = openScpi(tapped, p);
    loopAbort = new AbortController();
    const lost = (why: string) => {
      if (state.value !== 'connected') return;
      state.value = 'lost';
      message.value = `The link dropped: ${why}.`;
      void stopAll();
    };
    link.ondisconnect = lost;
    teardown = async () => {
      link.ondisconnect = null;
      await untap();
      await link.close().catch(() => undefined);
    };
    state.value = 'connected';
    if (p.mode === 'talk') {
      void talkLoop(p, loopAbort.signal);
    } else if (!listenOnly.value) {
      for (const cmd of p.initCommands) await send(cmd);
    }
  }

  async function stopAll(): Promise<void> {
    pollAbort?.abort();
    loopAbort?.abort();
    polling.value = false;
    const s = session;
    session = null;
    await s?.release();
    const down = teardown;
    teardown = null;
    await down?.();
    if (idleTimer) clearTimeout(idleTimer);
  }

  async function disconnect(): Promise<void> {
    await stopAll();
    if (state.value === 'connected' || state.value === 'connecting') state.value = 'idle';
  }

  /** Polls the profile's query command until {@link stopPolling} (query mode only). */
  async function startPolling(): Promise<void> {
    const p = profile.value;
    if (!session || !p || p.mode !== 'query' || polling.value || listenOnly.value) return;
    pollAbort = new AbortController();
    polling.value = true;
    const accept = (f: Parameters<typeof parseLine>[0]) => {
      const r = parseLine(f, p);
      return r.ok || r.kind === 'overrange';
    };
    try {
      for await (const r of session.client.poll(p.queryCommand, {
        intervalMs: p.intervalMs,
        signal: pollAbort.signal,
        accept,
      })) {
        if (r.frame) {
          const parsed = parseLine(r.frame, p);
          addReading(parsed.ok ? parsed.value : NaN, parsed.flags, r.frame.text);
        } else {
          addReading(NaN, ReadingFlag.timeout | (r.discarded.length ? ReadingFlag.garbled : 0));
        }
      }
    } catch (err) {
      message.value = err instanceof Error ? err.message : 'polling stopped';
    } finally {
      polling.value = false;
    }
  }

  function stopPolling(): void {
    pollAbort?.abort();
  }

  /** Whether a command gets a reply: SPI lines always do, SCPI only queries (`…?`). */
  function expectsReply(command: string): boolean {
    return profile.value?.parseRule === 'hex-spi' || command.includes('?');
  }

  /**
   * Sends one line. Queries wait for their reply (between polls, never inside one); in
   * talk-only mode the line is only written, since the stream owns what comes back.
   */
  async function send(command: string): Promise<ConsoleExchange> {
    const sentAt = performance.now();
    const entry: ConsoleExchange = { id: ++exchangeId, command, reply: null, ms: 0 };
    try {
      if (listenOnly.value)
        throw new Error('your role reads links but sends nothing to an instrument');
      if (!session) throw new Error('connect a link first');
      if (profile.value?.mode === 'talk' || !expectsReply(command))
        await session.client.send(command);
      else entry.reply = await session.client.query(command, { accept: () => true, retries: 0 });
      // The profile's own poll sent by hand is a reading like any polled one.
      const p = profile.value;
      if (
        entry.reply !== null &&
        p &&
        p.parseRule !== 'hex-spi' &&
        p.queryCommand.trim() &&
        command.trim().toUpperCase() === p.queryCommand.trim().toUpperCase()
      ) {
        const parsed = parseLine(
          { text: entry.reply, bytes: new TextEncoder().encode(entry.reply), flags: 0 },
          p,
        );
        addReading(parsed.ok ? parsed.value : NaN, parsed.flags, entry.reply);
      }
    } catch (err) {
      entry.error = err instanceof Error ? err.message : 'no reply';
    }
    entry.ms = performance.now() - sentAt;
    said.push(entry);
    publish();
    return entry;
  }

  /** One SPI chip-select: MOSI bytes out, MISO bytes back (or the bridge's refusal). */
  async function transfer(mosi: Uint8Array): Promise<{ miso: Uint8Array | null; error?: string }> {
    const hex = Array.from(mosi, (b) => b.toString(16).toUpperCase().padStart(2, '0')).join(' ');
    const ex = await send(hex);
    if (ex.error) return { miso: null, error: ex.error };
    const d = decodeHexLine(ex.reply ?? '');
    return d.ok ? { miso: d.bytes } : { miso: null, error: d.message };
  }

  function clear(): void {
    raw.clear();
    got.clear();
    said.clear();
    seq = 0;
    counts.value = { lines: 0, readings: 0, garbled: 0, timeouts: 0 };
    rawLines.value = [];
    readings.value = [];
    exchanges.value = [];
  }

  onBeforeUnmount(() => {
    if (publishTimer) clearTimeout(publishTimer);
    void stopAll();
  });

  return {
    state,
    message,
    polling,
    profile,
    rawLines,
    readings,
    exchanges,
    listenOnly,
    counts,
    connect,
    disconnect,
    startPolling,
    stopPolling,
    send,
    transfer,
    clear,
  };
}
