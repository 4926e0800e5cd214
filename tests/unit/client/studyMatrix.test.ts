// @vitest-environment happy-dom
import { describe, expect, it } from 'vitest';
import { RouterLinkStub, mount } from '@vue/test-utils';
import StudyMatrix from '../../../src/components/StudyMatrix.vue';
import {
  cellFigures,
  exposureSummary,
  matrixCounts,
  type StudyMatrix as Matrix,
} from '../../../src/api/studyPlan';

const fork = {
  id: 3,
  studyId: 1,
  label: 'Y3 32.768 kHz tuning fork',
  kind: 'tuning-fork',
  nominal: 32_768,
  unit: 'Hz',
  limit: 1,
  limitLow: -1,
  limitHigh: 1,
  limitUnit: 'ppm',
  position: 'Y3',
  serial: 'RC-0001-Y3',
};
const crystal = {
  ...fork,
  id: 1,
  label: 'Y1 16 MHz crystal',
  kind: 'crystal',
  nominal: 16_000_000,
  position: 'Y1',
  serial: 'RC-0001-Y1',
};
const wash = {
  kind: 'wash' as const,
  process: 'Aqueous ultrasonic wash',
  bathKHz: 40,
  temperatureC: 45,
  solvent: 'Aqueous detergent, 5 %',
  minutesPerSide: 3,
  cumulativeMinutes: 6,
};

function comparison(
  deltaPpm: number,
  uPpm: number,
  verdict: 'within' | 'exceeds' | 'inconclusive',
) {
  return {
    before: 10,
    delta: (deltaPpm * fork.nominal) / 1e6,
    deltaPpm,
    expandedUncertainty: (uPpm * fork.nominal) / 1e6,
    k: 2,
    effectiveDof: null,
    coverage: 'k = 2.00, about 95 % coverage',
    limit: 1,
    limitLow: -1,
    limitHigh: 1,
    limitUnit: 'ppm',
    limitInUnit: fork.nominal / 1e6,
    limitLowInUnit: -fork.nominal / 1e6,
    limitHighInUnit: fork.nominal / 1e6,
    verdict,
    significant: verdict !== 'within',
    conditions: [],
  };
}

const capture = (id: number, offsetPpm: number) => ({
  id,
  readingCount: 400,
  ambientC: 23.1,
  mean: fork.nominal * (1 + offsetPpm / 1e6),
  offsetPpm,
  simulated: false,
  sealBroken: false,
});

const matrix: Matrix = {
  studyId: 1,
  checkpoints: [
    { id: 11, studyId: 1, name: 'Baseline', order: 0, exposure: null },
    { id: 12, studyId: 1, name: 'After wash', order: 1, exposure: wash },
    {
      id: 13,
      studyId: 1,
      name: 'After over-exposure',
      order: 2,
      exposure: { ...wash, minutesPerSide: 30, cumulativeMinutes: 66 },
    },
    {
      id: 14,
      studyId: 1,
      name: 'After bake',
      order: 3,
      exposure: { kind: 'bake' as const, process: 'Bake-out', temperatureC: 85, hours: 4 },
    },
  ],
  rows: [
    {
      dut: fork,
      cells: [
        { checkpointId: 11, capture: capture(10, 0.02), comparison: null },
        {
          checkpointId: 12,
          capture: capture(20, 0.12),
          comparison: comparison(0.1, 0.05, 'within'),
        },
        {
          checkpointId: 13,
          capture: capture(30, 2.52),
          comparison: comparison(2.5, 0.05, 'exceeds'),
        },
        {
          checkpointId: 14,
          capture: capture(40, 1.0),
          comparison: comparison(0.98, 0.1, 'inconclusive'),
        },
      ],
    },
    {
      dut: crystal,
      cells: [11, 12, 13, 14].map((checkpointId) => ({
        checkpointId,
        capture: null,
        comparison: null,
      })),
    },
  ],
};

function mountMatrix() {
  return mount(StudyMatrix, {
    props: { matrix },
    global: { stubs: { RouterLink: RouterLinkStub } },
  });
}

describe('the study matrix', () => {
  it('draws a glyph and its word in every compared cell, linked to the capture', () => {
    const wrapper = mountMatrix();
    const compared = wrapper.findAll('td[data-cell="compared"]');
    expect(compared).toHaveLength(3);
    expect(compared.map((td) => td.find('.verdict-glyph__word').text())).toEqual([
      'within',
      'exceeds',
      'inconclusive',
    ]);
    expect(compared.every((td) => td.find('svg[role="img"]').exists())).toBe(true);
    expect(compared[1].find('[data-figure="delta"]').text()).toBe('Δ +2.500 ppm');
    expect(compared[1].find('[data-figure="expanded"]').text()).toBe('U ±0.050 ppm');
    const links = wrapper.findAllComponents(RouterLinkStub).map((l) => l.props('to'));
    expect(links).toEqual(['/captures/10', '/captures/20', '/captures/30', '/captures/40']);
  });

  it('shows the baseline cell with its mean and offset but no glyph', () => {
    const baseline = mountMatrix().find('td[data-cell="baseline"]');
    expect(baseline.find('svg').exists()).toBe(false);
    expect(baseline.text()).toContain('32\u2009768.0007 Hz');
    expect(baseline.text()).toContain('+0.020 ppm offset');
  });

  it('marks cells without a capture with a dash', () => {
    const wrapper = mountMatrix();
    const empty = wrapper.findAll('tr[data-dut="1"] td');
    expect(empty).toHaveLength(4);
    expect(
      empty.every((td) => td.attributes('data-cell') === 'empty' && td.text().startsWith('—')),
    ).toBe(true);
    expect(empty.every((td) => !td.find('svg').exists())).toBe(true);
  });

  it('counts the verdicts and the cells not yet captured', () => {
    const wrapper = mountMatrix();
    const count = (name: string) => wrapper.find(`[data-count="${name}"]`).text();
    expect([
      count('within'),
      count('exceeds'),
      count('inconclusive'),
      count('not-captured'),
    ]).toEqual(['1', '1', '1', '4']);
    expect(matrixCounts(matrix)).toMatchObject({
      within: 1,
      exceeds: 1,
      inconclusive: 1,
      notCaptured: 4,
    });
    // Only changes from the baseline: no line by kind.
    expect(wrapper.find('.matrix__kinds').exists()).toBe(false);
  });

  it('heads each column with the checkpoint and a one-line exposure summary', () => {
    const heads = mountMatrix()
      .findAll('th.matrix__head')
      .map((th) => th.text());
    expect(heads[0]).toBe('BaselineReference for every Δ');
    expect(heads[1]).toContain('40 kHz · 45 °C · 3 min/side');
    // A bake reads as a bake: its temperature and hours, never "per side" (issue 13).
    expect(exposureSummary(matrix.checkpoints[3].exposure)).toBe('Bake · 85 °C · 4 h');
  });

  it.each([
    // Δ = 0.1 ppm of 32 768 Hz = 3.2768 mHz; U = 0.05 ppm; shown in the DUT's limit unit.
    [fork, comparison(0.1, 0.05, 'within'), { delta: 0.1, expanded: 0.05, limit: 1, unit: 'ppm' }],
    // An accelerometer limited in mg: figures stay in the quantity's unit.
    [
      { ...fork, kind: 'accelerometer', nominal: 1000, unit: 'mg', limit: 20, limitUnit: 'mg' },
      {
        ...comparison(0, 1, 'within'),
        delta: -4,
        deltaPpm: null,
        expandedUncertainty: 2,
        limit: 20,
        limitUnit: 'mg',
        limitInUnit: 20,
      },
      { delta: -4, expanded: 2, limit: 20, unit: 'mg' },
    ],
  ] as const)('puts Δ, U and the limit of a cell in one unit (%#)', (dut, c, expected) => {
    const f = cellFigures(dut, c);
    expect(f.delta).toBeCloseTo(expected.delta, 9);
    expect(f.expanded).toBeCloseTo(expected.expanded, 9);
    expect(f.limit).toBe(expected.limit);
    expect(f.unit).toBe(expected.unit);
  });
});

describe("the matrix tally with a crystal's stability limit and tilt checks", () => {
  const tiltChange = (delta: number, unit: 'mg' | '%', verdict: 'within' | 'exceeds' | null) => ({
    delta,
    expandedUncertainty: unit === 'mg' ? 0.2 : 0.02,
    k: 2,
    coverage: 'k = 2.00',
    unit,
    limitLow: verdict ? (unit === 'mg' ? -20 : -1) : null,
    limitHigh: verdict ? (unit === 'mg' ? 20 : 1) : null,
    verdict,
    significant: verdict === 'exceeds',
  });
  const axisFigures = {
    offsetMg: 4.2,
    uOffsetMg: 0.1,
    offsetExpanded: 0.2,
    sensitivityErrorPct: 0.3,
    uSensitivityPct: 0.01,
    sensitivityExpanded: 0.02,
  };
  // σy(10 s) = 3 ppb with its interval 2.5 … 3.6 ppb wholly above a 1 ppb limit: exceeds.
  const stability = (verdict: 'within' | 'exceeds', dev: number) => ({
    limitPpb: 1,
    tauS: 10,
    confidence: 0.95,
    after: {
      captureId: 30,
      figure: {
        tauRequested: 10,
        m: 10,
        tau: 10,
        dev,
        lo: dev * 0.8,
        hi: dev * 1.2,
        edf: 50,
        noise: 'WFM',
        noiseSupported: true,
      },
      reason: null,
    },
    verdict,
    reason: null,
    before: null,
  });
  const accelerometer = {
    ...fork,
    id: 5,
    label: 'U5 3-axis accelerometer',
    kind: 'accelerometer',
    nominal: 1000,
    unit: 'mg',
    limit: 20,
    limitLow: -20,
    limitHigh: 20,
    limitUnit: 'mg',
  };
  const withMore: Matrix = {
    ...matrix,
    rows: [
      {
        dut: crystal,
        cells: [
          {
            checkpointId: 11,
            capture: capture(50, 0.01),
            comparison: null,
            stability: stability('within', 0.3e-9),
          },
          {
            checkpointId: 12,
            capture: capture(60, 0.02),
            comparison: comparison(0.01, 0.05, 'within'),
            stability: stability('exceeds', 3e-9),
          },
          { checkpointId: 13, capture: null, comparison: null },
          { checkpointId: 14, capture: null, comparison: null },
        ],
      },
      {
        dut: accelerometer,
        cells: [
          {
            checkpointId: 11,
            capture: capture(70, 0),
            comparison: null,
            tiltCheck: { check: { id: 1, axes: { x: axisFigures, z: axisFigures } }, change: null },
          },
          {
            checkpointId: 12,
            capture: capture(80, 0),
            comparison: null,
            tiltCheck: {
              check: { id: 2, axes: { x: axisFigures, z: axisFigures } },
              change: {
                before: 1,
                axes: {
                  // X offset moved 30 mg against ±20 mg: exceeds; its sensitivity has no limit.
                  x: {
                    offset: tiltChange(30, 'mg', 'exceeds'),
                    sensitivity: tiltChange(0.01, '%', null),
                  },
                  z: {
                    offset: tiltChange(0.1, 'mg', 'within'),
                    sensitivity: tiltChange(0.01, '%', 'within'),
                  },
                },
              },
            },
          },
          { checkpointId: 13, capture: null, comparison: null },
          { checkpointId: 14, capture: null, comparison: null },
        ],
      },
    ],
  };

  it('counts each shown verdict once: changes, stability limits and each tilt axis quantity', () => {
    // Counted by hand from the cells above (common practice, no source): one change within; stability
    // within at the baseline and exceeds later; tilt X offset exceeds, Z offset and sensitivity within,
    // X sensitivity without a limit not counted; the baseline tilt check carries no verdict.
    expect(matrixCounts(withMore)).toEqual({
      within: 4,
      exceeds: 2,
      inconclusive: 0,
      notCaptured: 4,
      byKind: {
        change: { within: 1, exceeds: 0, inconclusive: 0 },
        stability: { within: 1, exceeds: 1, inconclusive: 0 },
        tilt: { within: 2, exceeds: 1, inconclusive: 0 },
      },
    });
  });

  it('shows the stability and tilt "exceeds" in the tally, named by kind', () => {
    const wrapper = mount(StudyMatrix, {
      props: { matrix: withMore },
      global: { stubs: { RouterLink: RouterLinkStub } },
    });
    const count = (name: string) => wrapper.find(`[data-count="${name}"]`).text();
    expect(count('exceeds')).toBe('2');
    expect(count('within')).toBe('4');
    expect(count('stability-exceeds')).toBe('1');
    expect(count('tilt-exceeds')).toBe('1');
    expect(wrapper.find('[data-count="change-exceeds"]').exists()).toBe(false);
    const kinds = wrapper.findAll('.matrix__kind').map((k) => k.text().replace(/\s+/g, ' '));
    expect(kinds).toEqual([
      'Δ from baseline: 1 within',
      'stability limit: 1 exceeds · 1 within',
      'tilt check: 1 exceeds · 2 within',
    ]);
  });
});
