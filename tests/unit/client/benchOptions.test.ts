import { beforeEach, describe, expect, it, vi } from 'vitest';
import { useBenchOptions } from '../../../src/composables/useBenchOptions';

// The bench form's loader (issue 9 item 4): what it offers from the API's lists, its loading
// flags, its error, and that a study answer overtaken by a later choice is dropped. The API
// functions are mocked; the real ones are driven by tests/e2e/bench.test.ts.
const api = vi.hoisted(() => ({
  listStudies: vi.fn(),
  getStudy: vi.fn(),
  listInstruments: vi.fn(),
  listReferences: vi.fn(),
}));
vi.mock('../../../src/api/studies', () => ({
  listStudies: api.listStudies,
  getStudy: api.getStudy,
}));
vi.mock('../../../src/api/lab', () => ({
  listInstruments: api.listInstruments,
  listReferences: api.listReferences,
}));

/** A promise with its resolve and reject at hand. */
function deferred<T>() {
  let resolve!: (v: T) => void;
  let reject!: (e: unknown) => void;
  const promise = new Promise<T>((res, rej) => {
    resolve = res;
    reject = rej;
  });
  return { promise, resolve, reject };
}

const studyDetail = (id: number, title: string) => ({
  id,
  title,
  allowSimulated: true,
  checkpoints: [
    { id: id * 10, name: 'Baseline', order: 0 },
    { id: id * 10 + 1, name: 'Retired step', order: 1, archived: true },
  ],
  duts: [
    { id: id * 100, label: 'Y1', nominal: 16e6 },
    { id: id * 100 + 1, label: 'Y9', nominal: 16e6, archived: true },
  ],
});

beforeEach(() => {
  for (const f of Object.values(api)) f.mockReset();
});

describe('useBenchOptions', () => {
  it('loads what the form offers, with a loading flag', async () => {
    const studies = deferred<unknown[]>();
    api.listStudies.mockReturnValue(studies.promise);
    api.listInstruments.mockResolvedValue([
      { id: 1, kind: 'counter', retiredAt: null },
      { id: 2, kind: 'counter', retiredAt: '2026-10-01T00:00:00Z' },
      { id: 3, kind: 'reference', retiredAt: null },
      { id: 4, kind: 'thermometer', retiredAt: null },
    ]);
    api.listReferences.mockResolvedValue([
      { id: 7, retiredAt: null, labDefault: true },
      { id: 8, retiredAt: '2026-10-01T00:00:00Z', labDefault: false },
    ]);
    const o = useBenchOptions();
    const done = o.loadOptions();
    expect(o.loading.value).toBe(true);
    studies.resolve([
      { id: 1, status: 'running' },
      { id: 2, status: 'approved' },
      { id: 3, status: 'draft' },
    ]);
    expect(await done).toBe(true);
    expect(o.loading.value).toBe(false);
    expect(o.studies.value.map((s) => s.id)).toEqual([1, 3]);
    expect(o.instruments.value.map((i) => i.id)).toEqual([1, 4]);
    expect(o.references.value.map((r) => r.id)).toEqual([7]);
    expect(o.loadError.value).toBeNull();
  });

  it('keeps the reason when a list cannot be loaded', async () => {
    api.listStudies.mockResolvedValue([]);
    api.listInstruments.mockRejectedValue(new Error('Network unreachable'));
    api.listReferences.mockResolvedValue([]);
    const o = useBenchOptions();
    expect(await o.loadOptions()).toBe(false);
    expect(o.loadError.value).toBe('Network unreachable');
    expect(o.loading.value).toBe(false);
  });

  it('loads a study without its archived DUTs and checkpoints', async () => {
    api.getStudy.mockResolvedValue(studyDetail(1, 'Wash'));
    const o = useBenchOptions();
    const s = await o.loadStudy(1);
    expect(api.getStudy).toHaveBeenCalledWith(1);
    expect(s?.duts.map((d) => d.id)).toEqual([100]);
    expect(s?.checkpoints.map((c) => c.id)).toEqual([10]);
    expect(o.study.value).toEqual(s);
    expect(o.loadingStudy.value).toBe(false);
    expect(await o.loadStudy(null)).toBeNull();
    expect(o.study.value).toBeNull();
    expect(api.getStudy).toHaveBeenCalledTimes(1);
  });

  it('drops a study answer overtaken by a later choice', async () => {
    const first = deferred<unknown>();
    const second = deferred<unknown>();
    api.getStudy.mockReturnValueOnce(first.promise).mockReturnValueOnce(second.promise);
    const o = useBenchOptions();
    const a = o.loadStudy(1);
    const b = o.loadStudy(2);
    expect(o.loadingStudy.value).toBe(true);
    second.resolve(studyDetail(2, 'Bake'));
    expect((await b)?.title).toBe('Bake');
    first.resolve(studyDetail(1, 'Wash'));
    expect(await a).toBeNull();
    expect(o.study.value?.title).toBe('Bake');
    expect(o.loadingStudy.value).toBe(false);
  });

  it('says why a study could not be loaded, unless a later choice overtook it', async () => {
    const first = deferred<unknown>();
    api.getStudy
      .mockReturnValueOnce(first.promise)
      .mockRejectedValueOnce(new Error('Study 9 not found'));
    const o = useBenchOptions();
    const a = o.loadStudy(1);
    expect(await o.loadStudy(9)).toBeNull();
    expect(o.loadError.value).toBe('Study 9 not found');
    first.reject(new Error('late failure'));
    expect(await a).toBeNull();
    expect(o.loadError.value).toBe('Study 9 not found');
  });
});
