// @vitest-environment happy-dom
import { beforeEach, describe, expect, it } from 'vitest';
import { nextTick } from 'vue';
import { createPinia, setActivePinia } from 'pinia';
import { ACTIVE_CAPTURE_KEY, useBenchCaptureStore } from '../../../src/stores/benchCapture';
import { useBenchStatusStore } from '../../../src/stores/benchStatus';
import type { BenchStart } from '../../../src/utils/benchPlanning';
import type { Capture } from '../../../src/api/captures';
import { linkPreset } from '../../../shared/protocol/linkProfile';

// The bench's capture store (issue 13): it remembers the capture being recorded so a reload can
// resume it, tells the rail (through the light status store), and asks before the tab closes.
const request = {
  create: { dutId: 3, checkpointId: 4, quantity: 'frequency', unit: 'Hz', gateTime: 0.1 },
  profile: linkPreset('talk-counter'),
  linkKind: 'simulator',
  timeFactor: 10,
  target: { kind: 'none' },
  identity: { study: 'Wash study', checkpoint: 'Baseline', dut: 'Y1' },
  dut: {
    id: 3,
    studyId: 1,
    label: 'Y1',
    kind: 'crystal',
    nominal: 16e6,
    unit: 'Hz',
    limit: 1,
    limitUnit: 'ppm',
    position: null,
    serial: null,
  },
  checkpointOrder: 0,
  guided: false,
} as unknown as BenchStart;

function unloadAsks(): boolean {
  const e = new Event('beforeunload', { cancelable: true });
  window.dispatchEvent(e);
  return e.defaultPrevented;
}

describe('the bench capture store', () => {
  beforeEach(() => {
    localStorage.clear();
    setActivePinia(createPinia());
  });

  it('remembers a recording capture, shows it to the rail, guards the tab, and forgets it once finished', async () => {
    const bench = useBenchCaptureStore();
    const status = useBenchStatusStore();
    expect(unloadAsks()).toBe(false);
    bench.request = request;
    bench.state.capture = { id: 42 } as Capture;
    bench.state.phase = 'capturing';
    await nextTick();
    const saved = JSON.parse(localStorage.getItem(ACTIVE_CAPTURE_KEY)!);
    expect(saved.captureId).toBe(42);
    expect(saved.request.identity.dut).toBe('Y1');
    expect(status.recording).toBe(true);
    expect(status.captureId).toBe(42);
    expect(unloadAsks()).toBe(true);

    bench.state.phase = 'finished';
    await nextTick();
    expect(localStorage.getItem(ACTIVE_CAPTURE_KEY)).toBeNull();
    expect(status.recording).toBe(false);
    expect(unloadAsks()).toBe(false);
  });

  it('offers a remembered capture after a reload, and lets it go on request', async () => {
    localStorage.setItem(
      ACTIVE_CAPTURE_KEY,
      JSON.stringify({ captureId: 7, request, savedAt: '2026-12-02T06:00:00Z' }),
    );
    const status = useBenchStatusStore();
    expect(status.resumableId).toBe(7); // the rail knows before the bench page loads
    const bench = useBenchCaptureStore();
    expect(bench.resumable?.captureId).toBe(7);
    bench.forget();
    await nextTick();
    expect(bench.resumable).toBeNull();
    expect(status.resumableId).toBeNull();
    expect(localStorage.getItem(ACTIVE_CAPTURE_KEY)).toBeNull();
  });

  it('ignores a malformed remembered capture', () => {
    localStorage.setItem(ACTIVE_CAPTURE_KEY, '{"captureId":"x"}');
    expect(useBenchCaptureStore().resumable).toBeNull();
    expect(useBenchStatusStore().resumableId).toBeNull();
  });
});
