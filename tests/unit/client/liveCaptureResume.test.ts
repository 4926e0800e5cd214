// @vitest-environment happy-dom
import { afterEach, describe, expect, it, vi } from 'vitest';
import { mount } from '@vue/test-utils';
import { ApiError, configureHttp, http } from '../../../src/api/http';
import { refusedReadingIndex } from '../../../src/api/captures';
import { decodeReadingsF64, READINGS_F64_TYPE } from '../../../shared/protocol/readingsBinary';
import { MemoryPendingStore, type UploaderState } from '../../../src/api/uploader';
import {
  createLiveCapture,
  type LiveCaptureState,
  type ResumeOutcome,
} from '../../../src/composables/useLiveCapture';
import type { LiveSeries } from '../../../src/composables/useLiveSeries';
import BenchFooter from '../../../src/components/BenchFooter.vue';
import { queueFetch } from './helpers';

const readings = (n: number) =>
  Array.from({ length: n }, (_, i) => ({ seq: i, t: i, value: 16e6 }));
const refusal = (status: number, code: string, details?: unknown) => ({
  status,
  body: { error: { code, message: `refused (${code})`, details } },
});

/** Resumes the backlog of capture 5 (n readings) against the queued answers; resolves with how it ended. */
async function resumeWith(n: number, ...answers: Parameters<typeof queueFetch>) {
  const store = new MemoryPendingStore();
  await store.put(5, readings(n));
  const fetchMock = queueFetch(...answers);
  const live = createLiveCapture({ series: {} as LiveSeries, store });
  const done = new Promise<{ up: UploaderState; outcome: ResumeOutcome }>((resolve) => {
    void live.resumePending((_id, up, outcome) => resolve({ up, outcome }));
  });
  const result = await done;
  return { ...result, store, fetchMock };
}

describe('resuming readings left by an earlier session', () => {
  afterEach(() => vi.unstubAllGlobals());
  configureHttp({ getToken: () => 'jwt', onSessionLost: () => {} });

  it('sends them and says so', async () => {
    const { outcome, store } = await resumeWith(3, {
      body: { accepted: 3, duplicates: 0, highestSeq: 2 },
    });
    expect(outcome.kind).toBe('sent');
    expect(await store.count(5)).toBe(0);
  });

  it('keeps them on 403 and asks for the capture’s operator', async () => {
    const { outcome, store } = await resumeWith(3, refusal(403, 'forbidden'));
    expect(outcome.kind).toBe('kept');
    expect(outcome.message).toMatch(/operator \(or a lead or admin\) must sign in/);
    expect(await store.count(5)).toBe(3);
  });

  it('discards them when the capture is gone (404)', async () => {
    const { outcome, store } = await resumeWith(3, refusal(404, 'not-found'));
    expect(outcome.kind).toBe('discarded');
    expect(outcome.message).toContain('no longer exists');
    expect(await store.count(5)).toBe(0);
  });

  it('discards them as too late when the capture is finished (409)', async () => {
    const { outcome, store } = await resumeWith(3, refusal(409, 'capture-finished'));
    expect(outcome.kind).toBe('discarded');
    expect(outcome.message).toContain('too late');
    expect(await store.count(5)).toBe(0);
  });

  it('drops only the reading a 400 names and sends the rest', async () => {
    const { outcome, store, fetchMock, up } = await resumeWith(
      4,
      refusal(400, 'validation', { index: 2, reason: 'value must be a finite number' }),
      { body: { accepted: 3, duplicates: 0, highestSeq: 3 } },
    );
    expect(outcome.kind).toBe('sent');
    expect(outcome.message).toContain('1 reading the server named as malformed was dropped');
    expect(up.refused).toBe(1);
    // The backlog goes in the compact binary body (issue 15).
    const init = fetchMock.mock.calls[1][1];
    expect(new Headers(init?.headers).get('content-type')).toBe(READINGS_F64_TYPE);
    const second = decodeReadingsF64(init?.body as Uint8Array);
    expect('seq' in second && second.seq).toEqual([0, 1, 3]);
    expect(await store.count(5)).toBe(0);
  });

  it('keeps them on a 400 that names no reading', async () => {
    const { outcome, store } = await resumeWith(
      3,
      refusal(400, 'validation', { index: -1, reason: 'readings must be an array' }),
    );
    expect(outcome.kind).toBe('kept');
    expect(await store.count(5)).toBe(3);
  });
});

describe('the API error of a refused reading', () => {
  afterEach(() => vi.unstubAllGlobals());

  it('exposes object details as context and names the bad index', async () => {
    queueFetch(
      refusal(400, 'validation', { index: 7, reason: 'seq must be a whole number from 0' }),
    );
    const err = await http
      .post('/api/captures/1/readings', { readings: [] })
      .catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ApiError);
    expect((err as ApiError).context).toEqual({
      index: 7,
      reason: 'seq must be a whole number from 0',
    });
    expect(refusedReadingIndex(err)).toBe(7);
    expect(refusedReadingIndex(new ApiError(403, 'forbidden', 'no'))).toBeNull();
  });

  it('turns a timed-out request into a retryable failure', async () => {
    vi.stubGlobal(
      'fetch',
      vi.fn(async () => {
        throw new DOMException('The operation timed out.', 'TimeoutError');
      }),
    );
    await expect(http.post('/api/captures/1/readings', {})).rejects.toMatchObject({
      status: 0,
      code: 'timeout',
    });
  });
});

describe('the bench footer', () => {
  const state = (upload: Partial<UploaderState>): LiveCaptureState => ({
    phase: 'capturing',
    capture: null,
    error: null,
    linkLost: null,
    taken: 10,
    upload: {
      pending: 10,
      sent: 0,
      duplicates: 0,
      failures: 0,
      offline: false,
      storeErrors: 0,
      held: 0,
      refused: 0,
      lost: 0,
      ...upload,
    },
    elapsed: 1,
    garbled: 0,
    timeouts: 0,
    lastIssue: null,
    rate: 0,
    drainFrom: 0,
  });

  it('warns when readings are held in memory because browser storage failed', () => {
    const w = mount(BenchFooter, {
      props: {
        state: state({ held: 1200, storeErrors: 1, storeError: 'QuotaExceededError' }),
        target: { kind: 'none' },
        timeFactor: 1,
      },
    });
    expect(w.get('[data-testid="storage-warning"]').text()).toMatch(
      /browser storage failed .* held in memory; do not close this tab/i,
    );
  });

  it('says nothing about storage when it works', () => {
    const w = mount(BenchFooter, {
      props: { state: state({}), target: { kind: 'none' }, timeFactor: 1 },
    });
    expect(w.find('[data-testid="storage-warning"]').exists()).toBe(false);
  });
});
