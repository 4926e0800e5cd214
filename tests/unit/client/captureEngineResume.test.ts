// @vitest-environment happy-dom
import { afterEach, describe, expect, it, vi } from 'vitest';
import { configureHttp } from '../../../src/api/http';
import { MemoryPendingStore } from '../../../src/api/uploader';
import { createLiveCapture } from '../../../src/composables/useLiveCapture';
import type { LiveSeries } from '../../../src/composables/useLiveSeries';
import type { Capture } from '../../../src/api/captures';
import type { SerialLink } from '../../../src/links/SerialLink';
import { linkPreset } from '../../../shared/protocol/linkProfile';
import { decodeReadingsF64 } from '../../../shared/protocol/readingsBinary';

// The capture engine continues a capture after a reload (issue 13): no new capture is opened,
// seqs go on after the highest stored one and capture time after the last stored reading.
function scriptedLink(lines: string[]): SerialLink {
  const enc = new TextEncoder();
  const readable = new ReadableStream<Uint8Array>({
    start(c) {
      for (const l of lines) c.enqueue(enc.encode(`${l}\n`));
      c.close();
    },
  });
  return {
    kind: 'simulator',
    readable,
    writable: new WritableStream<Uint8Array>(),
    open: async () => {},
    close: async () => {},
    getInfo: () => ({}),
    ondisconnect: null,
  };
}

const series = (): LiveSeries =>
  ({
    push: vi.fn(),
    clear: vi.fn(),
    refreshStats: vi.fn(),
    ring: { flagged: 0 },
  }) as unknown as LiveSeries;

describe('resuming a capture in the engine', () => {
  afterEach(() => vi.unstubAllGlobals());
  configureHttp({ getToken: () => 'jwt', onSessionLost: () => {} });

  it('numbers readings from seqBase, times them from tBase and finishes the same capture', async () => {
    const capture = { id: 9, state: 'open', highestSeq: 4 } as unknown as Capture;
    const sent: Array<{ seq: number; t: number }> = [];
    const fetchMock = vi.fn(async (url: string, init?: RequestInit) => {
      const json = (body: unknown) =>
        new Response(JSON.stringify(body), {
          status: 200,
          headers: { 'Content-Type': 'application/json' },
        });
      if (url.endsWith('/readings')) {
        // The bench sends the compact binary body (issue 15).
        const cols = decodeReadingsF64(init?.body as Uint8Array);
        if (!('seq' in cols)) throw new Error(cols.reason);
        const batch = cols.seq.map((seq, i) => ({ seq, t: cols.t[i] }));
        sent.push(...batch);
        return json({
          accepted: batch.length,
          duplicates: 0,
          highestSeq: Math.max(...batch.map((r) => r.seq)),
        });
      }
      if (url.endsWith('/finish')) return json({ ...capture, state: 'finished', readingCount: 8 });
      throw new Error(`unexpected ${url}`);
    });
    vi.stubGlobal('fetch', fetchMock);
    const live = createLiveCapture({
      series: series(),
      store: new MemoryPendingStore(),
      flushMs: 5,
    });
    await live.start({
      create: { dutId: 1, checkpointId: 2, quantity: 'frequency', unit: 'Hz', gateTime: 1 },
      profile: linkPreset('talk-counter'),
      link: scriptedLink(['16000000.1', '16000000.2', '16000000.3']),
      timeFactor: 1,
      target: { kind: 'count', n: 8 },
      pacedGate: 1,
      resume: { capture, seqBase: 5, tBase: 10 },
    });
    // The target (8 readings: 5 stored before the reload + 3 now) stops and finishes it by itself.
    await vi.waitFor(() => expect(live.state.phase).toBe('finished'), { timeout: 5000 });
    expect(live.state.capture?.state).toBe('finished');
    const urls = new Set(fetchMock.mock.calls.map((c) => String(c[0])));
    // No POST /api/captures: the capture is continued, not opened again.
    expect([...urls]).toEqual(['/api/captures/9/readings', '/api/captures/9/finish']);
    expect(sent.map((r: { seq: number }) => r.seq)).toEqual([5, 6, 7]);
    // t = tBase + line index × gate (1 s): 10, 11, 12
    expect(sent.map((r: { t: number }) => r.t)).toEqual([10, 11, 12]);
    expect(live.state.taken).toBe(8);
  });
});
