import { describe, expect, it } from 'vitest';
import {
  csvField,
  devAt,
  parseSelection,
  selectionQuery,
  stabilitySvg,
  toCsv,
} from '../../../src/utils/workbench';
import { curveScale, formatDuration, limitInCurveUnits } from '../../../src/utils/plan';
import { guessDelimiter } from '../../../shared/protocol/importCsv';

describe('the workbench selection in the URL', () => {
  it('round-trips through the query string', () => {
    const s = parseSelection({
      ids: '5,3,9',
      kind: 'mdev',
      tau: '16',
      before: '3',
      after: '9',
      study: '2',
    });
    expect(s).toEqual({ ids: [5, 3, 9], kind: 'mdev', tau: 16, before: 3, after: 9, study: 2 });
    expect(parseSelection(selectionQuery(s))).toEqual(s);
  });

  it('drops what is malformed instead of failing: bad ids, unknown kinds, a pair outside the selection', () => {
    expect(parseSelection({ ids: '1,x,-2,1,4', kind: 'nope', before: '7', after: '4' })).toEqual({
      ids: [1, 4],
      kind: 'oadev',
      tau: null,
      before: null,
      after: 4,
      study: null,
    });
    expect(
      parseSelection({ ids: Array.from({ length: 20 }, (_, i) => i + 1).join(',') }).ids,
    ).toHaveLength(12);
  });
});

describe('the deviation at τ', () => {
  const points = [
    { tau: 1, dev: 1e-9, lo: 0.9e-9, hi: 1.1e-9 },
    { tau: 4, dev: 0.5e-9 },
  ];
  it('is the point itself at a plotted τ, and the log–log line between neighbours elsewhere', () => {
    expect(devAt(points, 1)).toEqual({ dev: 1e-9, lo: 0.9e-9, hi: 1.1e-9, exact: true });
    // Halfway on a log axis between 1 s and 4 s is 2 s; halfway between 1e-9 and 5e-10 on a log axis is their geometric mean (common practice, no source).
    const mid = devAt(points, 2)!;
    expect(mid.exact).toBe(false);
    expect(mid.dev).toBeCloseTo(Math.sqrt(1e-9 * 0.5e-9), 20);
    expect(devAt(points, 8)).toBeNull();
  });
});

describe('CSV and SVG exports', () => {
  it('quotes fields with commas or quotes and defuses formula-like text', () => {
    expect(csvField('Y1, crystal')).toBe('"Y1, crystal"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField('=SUM(A1)')).toBe("'=SUM(A1)");
    expect(csvField(-1.5)).toBe('-1.5');
    expect(toCsv(['a', 'b'], [[1, null]])).toBe('a,b\n1,\n');
  });

  it('draws one polyline and one legend entry per curve, and escapes labels', () => {
    const svg = stabilitySvg(
      [
        {
          label: 'Y1 <a>',
          colour: '#123456',
          points: [
            { tau: 1, dev: 1e-9, lo: 8e-10, hi: 1.2e-9 },
            { tau: 10, dev: 3e-10, lo: 2e-10, hi: 4e-10 },
          ],
        },
        {
          label: 'Y3',
          colour: '#654321',
          dashed: true,
          points: [
            { tau: 1, dev: 2e-9 },
            { tau: 10, dev: 6e-10 },
          ],
        },
      ],
      'OADEV',
    );
    expect(svg.startsWith('<svg xmlns="http://www.w3.org/2000/svg"')).toBe(true);
    expect(svg.match(/<polyline /g)).toHaveLength(2);
    expect(svg.match(/<polygon /g)).toHaveLength(1);
    expect(svg).toContain('Y1 &lt;a&gt;');
    expect(svg).toContain('stroke-dasharray="6 4"');
  });
});

describe('planner units', () => {
  const crystal = { nominal: 16e6, unit: 'Hz', limit: 2, limitUnit: 'ppm' };
  it('turns the limit into curve units: fractional for frequency, the DUT unit otherwise', () => {
    expect(limitInCurveUnits(crystal)).toBeCloseTo(2e-6, 18);
    // 32 Hz on 16 MHz is 2 ppm (hand-computed).
    expect(limitInCurveUnits({ ...crystal, limit: 32, limitUnit: 'Hz' })).toBeCloseTo(2e-6, 18);
    expect(limitInCurveUnits({ nominal: 1000, unit: 'mg', limit: 5, limitUnit: 'mg' })).toBe(5);
    expect(limitInCurveUnits({ ...crystal, limit: null, limitLow: -3, limitHigh: 1 })).toBeCloseTo(
      1e-6,
      18,
    );
    expect(limitInCurveUnits({ ...crystal, limit: null })).toBeNull();
    expect(curveScale(crystal)).toBe(1 / 16e6);
  });

  it('says lengths the way people do', () => {
    expect(formatDuration(45)).toBe('45 s');
    expect(formatDuration(601)).toBe('11 min');
    expect(formatDuration(9000)).toBe('2 h 30 min');
  });
});

describe('the import delimiter guess', () => {
  it('finds the delimiter of the data lines under a header block, and never the comma with decimal commas', () => {
    expect(guessDelimiter('Logger: x, y\n# note\ntime;value\n0;1,5\n1;1,6\n', ',')).toBe(';');
    expect(guessDelimiter('time\tvalue\n0\t1.5\n1\t1.6\n')).toBe('\t');
    expect(guessDelimiter('Operator: night shift\n0,16000000.1\n1,16000000.2\n')).toBe(',');
  });
});
