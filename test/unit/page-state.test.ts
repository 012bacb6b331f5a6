/**
 * The page's address state (api/web/app/state.ts) and table order
 * (api/web/app/table.ts): pure modules of the page, run here in Node.
 * Addresses are read with the WHATWG URL Standard's URLSearchParams (Node's
 * own implementation) as the outside reference.
 */
import { describe, expect, it } from 'vitest';
import { DEFAULT_STATE, parseState, stateToSearch, type ViewState } from '../../api/web/app/state.js';
import { sortRows, tableHtml, type TableRow } from '../../api/web/app/table.js';

describe('address state', () => {
  it('reads the documented example address', () => {
    const s = parseState('?metric=suhi_night&year=2024&district=D07');
    expect(s).toEqual({ ...DEFAULT_STATE, metric: 'suhi_night', year: 2024, district: 'D07' });
  });
  it('writes an address that reads back to the same state', () => {
    const s: ViewState = { metric: 'lst_day', year: 2021, season: 'all', unit: 'C', district: 'D 1&2', spots: true, sort: 'trend', dir: 'desc' };
    const search = stateToSearch(s);
    expect(new URLSearchParams(search).get('district')).toBe('D 1&2'); // escaped for the address, read back whole
    expect(parseState(search)).toEqual(s);
  });
  it('falls back to the defaults for anything it does not understand', () => {
    const s = parseState('?metric=suhi_nite&year=0x7e4&season=monsoon&unit=F&spots=yes&sort=colour&dir=up');
    expect(s).toEqual(DEFAULT_STATE);
  });
  it('always names the metric, and the year once chosen', () => {
    expect(new URLSearchParams(stateToSearch(DEFAULT_STATE)).get('metric')).toBe('suhi_night');
    expect(new URLSearchParams(stateToSearch(DEFAULT_STATE)).has('year')).toBe(false);
    expect(new URLSearchParams(stateToSearch({ ...DEFAULT_STATE, year: 2019 })).get('year')).toBe('2019');
  });
});

const row = (id: string, name: string, value: number | null, rank: number | null): TableRow => ({
  id, name, rank, value, rank_change: null, previous_rank: null, trend: null, dates_day: 3, dates_night: 2,
  metrics: { lst_day: value, lst_night: null, suhi_day: null, suhi_night: value, ati: null },
});

describe('table order', () => {
  const rows = [row('a', 'Brook End', 1.5, 2), row('b', 'alder quarter', null, null), row('c', 'Cinder Lane', 3, 1), row('d', 'Dockside', -0.5, 3)];
  it('sorts numbers either way with districts without a value last', () => {
    expect(sortRows(rows, 'value', 'desc').map((r) => r.id)).toEqual(['c', 'a', 'd', 'b']);
    expect(sortRows(rows, 'value', 'asc').map((r) => r.id)).toEqual(['d', 'a', 'c', 'b']);
    expect(sortRows(rows, 'rank', 'asc').map((r) => r.id)).toEqual(['c', 'a', 'd', 'b']);
  });
  it('sorts names as the locale compares them (String.prototype.localeCompare, ECMA-402)', () => {
    expect(sortRows(rows, 'name', 'asc').map((r) => r.name)).toEqual(['alder quarter', 'Brook End', 'Cinder Lane', 'Dockside']);
  });
  it('gives one row the Tab stop and escapes names', () => {
    const html = tableHtml([...rows, row('e', '<b>Quay</b>', 1, 4)], { metric: 'suhi_night', unit: 'K', sort: 'value', dir: 'desc', selected: 'a', caption: 'c' });
    expect(html.match(/tabindex="0"/g)).toHaveLength(1);
    expect(html).toMatch(/<tr tabindex="0" data-id="a" aria-selected="true"/);
    expect(html).toContain('&#60;b&#62;Quay&#60;/b&#62;');
    // the chosen metric has its own column and is not repeated
    expect(html.match(/Night SUHI \(K\)/g)).toHaveLength(1);
  });
});
