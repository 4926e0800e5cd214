// @vitest-environment happy-dom
import { describe, expect, it } from 'vitest';
import { mount } from '@vue/test-utils';
import VerdictGlyph from '../../../src/components/VerdictGlyph.vue';

const WIDTH = 168;
const PAD = 6;

/** The glyph maps v to PAD + (v + R)/(2R)·(W − 2·PAD) with R = 1.18·max(L, |Δ| + U). */
function expectedX(v: number, reach: number): number {
  const r = reach * 1.18;
  return PAD + ((v + r) / (2 * r)) * (WIDTH - 2 * PAD);
}

function geometry(wrapper: ReturnType<typeof mount>) {
  const svg = wrapper.find('svg');
  const n = (name: string) => Number(svg.attributes(`data-${name}`));
  return {
    bandFrom: n('band-from'),
    bandTo: n('band-to'),
    tick: n('tick'),
    whiskerFrom: n('whisker-from'),
    whiskerTo: n('whisker-to'),
  };
}

describe('the limit-band verdict glyph', () => {
  it('draws a within verdict with the whisker inside the band and no hatch or notch', () => {
    // Δ = 0.2, U = 0.3, L = 1 → |Δ| + U ≤ L: within (guard band w = U).
    const wrapper = mount(VerdictGlyph, { props: { delta: 0.2, expanded: 0.3, limit: 1 } });
    const g = geometry(wrapper);
    expect(g.bandFrom).toBeCloseTo(expectedX(-1, 1), 1);
    expect(g.bandTo).toBeCloseTo(expectedX(1, 1), 1);
    expect(g.tick).toBeCloseTo(expectedX(0.2, 1), 1);
    expect(g.whiskerFrom).toBeGreaterThan(g.bandFrom);
    expect(g.whiskerTo).toBeLessThan(g.bandTo);
    expect(wrapper.find('.verdict-glyph__hatch').exists()).toBe(false);
    expect(wrapper.find('.verdict-glyph__notch').exists()).toBe(false);
    expect(wrapper.find('.verdict-glyph__word').text()).toBe('within');
    expect(wrapper.attributes('data-verdict')).toBe('within');
  });

  it('draws an exceeds verdict outside the band with a notch on the crossed edge', () => {
    // Δ = 2, U = 0.5, L = 1 → |Δ| − U > L: exceeds.
    const wrapper = mount(VerdictGlyph, { props: { delta: 2, expanded: 0.5, limit: 1 } });
    const g = geometry(wrapper);
    expect(g.tick).toBeCloseTo(expectedX(2, 2.5), 1);
    expect(g.whiskerFrom).toBeGreaterThan(g.bandTo);
    const notch = wrapper.find('.verdict-glyph__notch');
    expect(notch.exists()).toBe(true);
    expect(Number(/^M([\d.]+)/.exec(notch.attributes('d') ?? '')?.[1])).toBeCloseTo(g.bandTo, 1);
    expect(wrapper.find('.verdict-glyph__hatch').exists()).toBe(false);
    expect(wrapper.find('.verdict-glyph__word').text()).toBe('exceeds');
  });

  it('notches the lower edge when the change is negative', () => {
    const wrapper = mount(VerdictGlyph, { props: { delta: -3, expanded: 0.4, limit: 1 } });
    const g = geometry(wrapper);
    expect(g.whiskerTo).toBeLessThan(g.bandFrom);
    const d = wrapper.find('.verdict-glyph__notch').attributes('d') ?? '';
    expect(Number(/^M([\d.]+)/.exec(d)?.[1])).toBeCloseTo(g.bandFrom, 1);
  });

  it('hatches the straddled part of an inconclusive verdict', () => {
    // Δ = 0.9, U = 0.3, L = 1 → neither rule holds: inconclusive.
    const wrapper = mount(VerdictGlyph, { props: { delta: 0.9, expanded: 0.3, limit: 1 } });
    const g = geometry(wrapper);
    expect(g.whiskerFrom).toBeLessThan(g.bandTo);
    expect(g.whiskerTo).toBeGreaterThan(g.bandTo);
    const hatch = wrapper.find('.verdict-glyph__hatch');
    expect(hatch.exists()).toBe(true);
    expect(Number(hatch.attributes('x'))).toBeCloseTo(g.whiskerFrom, 1);
    expect(Number(hatch.attributes('x')) + Number(hatch.attributes('width'))).toBeCloseTo(
      g.whiskerTo,
      1,
    );
    expect(hatch.attributes('fill')).toMatch(/^url\(#verdict-hatch-/);
    expect(wrapper.find('pattern').exists()).toBe(true);
    expect(wrapper.find('.verdict-glyph__word').text()).toBe('inconclusive');
  });

  it('follows the server verdict and names it for screen readers', () => {
    const wrapper = mount(VerdictGlyph, {
      props: { delta: 0.1, expanded: 0.1, limit: 1, verdict: 'inconclusive', unit: 'ppm' },
    });
    expect(wrapper.find('.verdict-glyph__word').text()).toBe('inconclusive');
    expect(wrapper.find('svg').attributes('aria-label')).toMatch(
      /against a limit of ±1 ppm: inconclusive$/,
    );
  });

  it('draws an asymmetric limit −1/+2 with the band off-centre and decides each side (issue 8)', () => {
    // Δ = 1.5, U = 0.4 against [−1, +2]: 1.9 ≤ 2 and 1.1 ≥ −1 → within (ILAC-G8, w = U per side).
    const wrapper = mount(VerdictGlyph, {
      props: { delta: 1.5, expanded: 0.4, limitLow: -1, limitHigh: 2 },
    });
    const g = geometry(wrapper);
    expect(g.bandFrom).toBeCloseTo(expectedX(-1, 2), 1); // reach = max(|−1|, 2, 1.9) = 2
    expect(g.bandTo).toBeCloseTo(expectedX(2, 2), 1);
    expect(wrapper.attributes('data-verdict')).toBe('within');
    expect(wrapper.find('svg').attributes('aria-label')).toContain('against a limit of -1 to +2');
  });

  it('leaves the open side of a one-sided limit open and notches the side crossed', () => {
    // "At most +3": Δ = 2.5, U = 1 straddles +3 → inconclusive; Δ = 4.5 → exceeds.
    const open = mount(VerdictGlyph, {
      props: { delta: 2.5, expanded: 1, limitLow: null, limitHigh: 3 },
    });
    expect(geometry(open).bandFrom).toBe(PAD);
    expect(open.attributes('data-verdict')).toBe('inconclusive');
    const over = mount(VerdictGlyph, {
      props: { delta: 4.5, expanded: 1, limitLow: null, limitHigh: 3, k: 2.31 },
    });
    expect(over.attributes('data-verdict')).toBe('exceeds');
    expect(over.find('.verdict-glyph__notch').exists()).toBe(true);
    expect(over.find('svg').attributes('aria-label')).toContain(
      '(k = 2.31) against a limit of at most 3',
    );
  });
});
