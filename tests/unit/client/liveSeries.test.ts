// @vitest-environment happy-dom
import { describe, expect, it } from 'vitest';
import { RingSeries, computeLiveStats, windowView } from '../../../src/composables/useLiveSeries';

function filled(capacity: number, n: number, dt = 0.1, value = (i: number) => i): RingSeries {
  const r = new RingSeries(capacity);
  for (let i = 0; i < n; i++) r.push(i * dt, value(i));
  return r;
}

describe('the live ring buffer', () => {
  it('keeps the newest readings, oldest first, once it wraps', () => {
    const r = filled(8, 20);
    expect(r.length).toBe(8);
    expect(r.total).toBe(20);
    expect(Array.from({ length: 8 }, (_, k) => r.vAt(k))).toEqual([12, 13, 14, 15, 16, 17, 18, 19]);
    expect(r.lastT).toBeCloseTo(1.9, 12);
  });

  it('finds the first reading at or after a time across the wrap point', () => {
    const r = filled(8, 20);
    expect(r.lowerBound(1.45)).toBe(3); // t = 1.5 is the 4th held reading (12 → 1.2 s)
    expect(r.lowerBound(0)).toBe(0);
    expect(r.lowerBound(99)).toBe(8);
  });
});

describe('the chart window', () => {
  it('holds only the last span seconds of readings', () => {
    const r = filled(1000, 500); // t 0 … 49.9 s
    const v = windowView(r, 10, 10_000);
    expect(v.count).toBe(101); // 39.9 … 49.9 s inclusive
    expect(v.t[0]).toBeCloseTo(39.9, 9);
    expect(v.t[v.t.length - 1]).toBeCloseTo(49.9, 9);
    expect(v.decimated).toBe(false);
  });

  it('ends the window earlier when scrolled back', () => {
    const r = filled(1000, 500);
    const v = windowView(r, 5, 10_000, 20);
    expect(v.t[0]).toBeGreaterThanOrEqual(15);
    expect(v.t[v.t.length - 1]).toBeLessThanOrEqual(20);
    expect(v.end).toBe(20);
  });

  it('decimates to min/max per pixel when the window has more readings than pixels', () => {
    const r = filled(1 << 16, 50_000, 0.001, (i) => (i === 31_234 ? 1e6 : Math.sin(i / 50)));
    const v = windowView(r, Infinity, 400);
    expect(v.count).toBe(50_000);
    expect(v.decimated).toBe(true);
    expect(v.t.length).toBeLessThanOrEqual(800);
    expect(Math.max(...v.v)).toBe(1e6); // the spike survives decimation
    for (let i = 1; i < v.t.length; i++) expect(v.t[i]).toBeGreaterThan(v.t[i - 1]);
  });

  it('is empty for an empty ring', () => {
    expect(windowView(new RingSeries(4), 10, 100).count).toBe(0);
  });
});

describe('live statistics', () => {
  it('gives the overlapping Allan deviation of an alternating frequency', () => {
    const nominal = 16e6;
    // y alternates 3.2e-6 ± 1e-9. By NIST SP 1065 eq 11, at m = 1 every first difference of y is
    // ±2e-9, so σ² = ½·(2e-9)² and σ = √2·1e-9; at even m each m-average is 3.2e-6 exactly
    // and σ = 0 (worked by hand from the definition).
    const r = filled(1024, 1000, 1, (i) => nominal * (1 + 3.2e-6 + (i % 2 ? 1e-9 : -1e-9)));
    const s = computeLiveStats(r, { nominal, tau0: 1, frequency: true });
    expect(s.oadev[0].dev! / 1e-9).toBeCloseTo(Math.SQRT2, 4);
    expect(s.oadev[1].dev!).toBeLessThan(1e-14);
    expect(s.oadev[2].dev!).toBeLessThan(1e-14);
  });

  it('gives n, mean, sd and the offset in ppm against the nominal', () => {
    const nominal = 16e6;
    // alternating ±0.016 Hz around 16 MHz + 51.2 Hz (+3.2 ppm)
    const r = filled(1024, 1000, 1, (i) => nominal + 51.2 + (i % 2 ? 0.016 : -0.016));
    const s = computeLiveStats(r, { nominal, tau0: 1, frequency: true });
    expect(s.n).toBe(1000);
    expect(s.mean).toBeCloseTo(nominal + 51.2, 6);
    expect(s.sd).toBeCloseTo(0.016 * Math.sqrt(1000 / 999), 7);
    expect(s.offsetPpm).toBeCloseTo(3.2, 9);
    expect(s.oadev.map((p) => p.tau)).toEqual([1, 10, 100]);
    expect(s.oadev[0].dev).toBeGreaterThan(0);
    expect(s.oadev[2].dev).not.toBeNull();
  });

  it('uses at most the newest readings it is allowed, while n counts them all', () => {
    const r = filled(4096, 3000, 1, (i) => (i < 2000 ? 0 : 10));
    const s = computeLiveStats(r, { nominal: null, tau0: 1, frequency: false, limit: 1000 });
    expect(s.n).toBe(3000);
    expect(s.used).toBe(1000);
    expect(s.mean).toBe(10);
    expect(s.offsetPpm).toBeNull();
  });

  it('leaves OADEV empty at τ values the data cannot reach yet', () => {
    const r = filled(64, 30, 0.1, (i) => 1e7 + (i % 3));
    const s = computeLiveStats(r, { nominal: 1e7, tau0: 0.1, frequency: true });
    expect(s.oadev[0].dev).not.toBeNull();
    expect(s.oadev[2].dev).toBeNull();
  });
});
