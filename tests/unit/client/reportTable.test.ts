// @vitest-environment happy-dom
import { describe, expect, it } from 'vitest';
import { mount } from '@vue/test-utils';
import { h } from 'vue';
import ReportTable from '../../../src/components/ReportTable.vue';

// The report's one table piece: the headings from `columns`, the rows from the slot inside the
// body, and the caller's attributes on the table itself (tests and print rules find it by them).
describe('ReportTable', () => {
  it('heads the columns in order and puts the slot rows in the body', () => {
    const w = mount(ReportTable, {
      props: { columns: ['Capture', 'Readings', 'Check'] },
      attrs: { class: 'report-seals', 'data-testid': 'seals' },
      slots: {
        default: () => [
          h('tr', [h('td', '#4'), h('td', { class: 'db-tabular' }, '600'), h('td', 'verified')]),
          h('tr', [h('td', '#5'), h('td', { class: 'db-tabular' }, '20'), h('td', 'BROKEN')]),
        ],
      },
    });
    const table = w.get('table');
    expect(table.classes()).toEqual(['report-table', 'report-seals']);
    expect(table.attributes('data-testid')).toBe('seals');
    expect(w.findAll('thead th').map((th) => th.text())).toEqual(['Capture', 'Readings', 'Check']);
    const rows = w.findAll('tbody tr');
    expect(rows.map((r) => r.findAll('td').map((td) => td.text()))).toEqual([
      ['#4', '600', 'verified'],
      ['#5', '20', 'BROKEN'],
    ]);
  });

  it('keeps the headings when there are no rows', () => {
    const w = mount(ReportTable, { props: { columns: ['When', 'Step'] } });
    expect(w.findAll('thead th').map((th) => th.text())).toEqual(['When', 'Step']);
    expect(w.findAll('tbody tr')).toHaveLength(0);
  });
});
