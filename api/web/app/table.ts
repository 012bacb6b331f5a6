/**
 * The district table: one row per district with the chosen metric's rank,
 * value, change of rank against the previous year and trend, and every other
 * metric beside it. Builds HTML text and sorts rows; no DOM access here.
 */
import { esc } from '../draw/svg.js';
import { formatValue, METRICS, unitLabel, type MetricName, type TemperatureUnit } from '../draw/metrics.js';
import type { TrendFields } from './api.js';
import type { SortKey } from './state.js';

export interface TableRow {
  id: string;
  name: string;
  rank: number | null;
  /** The chosen metric, in the unit shown. */
  value: number | null;
  rank_change: number | null;
  previous_rank: number | null;
  trend: TrendFields | null;
  /** Every metric, in the unit shown. */
  metrics: Record<MetricName, number | null>;
  dates_day: number | null;
  dates_night: number | null;
}

interface Column {
  key: SortKey;
  label: (metric: MetricName, unit: TemperatureUnit) => string;
  /** Numeric columns align right. */
  numeric: boolean;
}

const METRIC_COLUMNS: MetricName[] = ['lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati'];

export const COLUMNS: Column[] = [
  { key: 'rank', label: () => 'Rank', numeric: true },
  { key: 'name', label: () => 'District', numeric: false },
  { key: 'value', label: (m, u) => `${METRICS[m].short} (${unitLabel(m, u)})`, numeric: true },
  { key: 'rank_change', label: () => 'Rank change', numeric: true },
  { key: 'trend', label: (m, u) => `Trend, ${unitLabel(m, u)}/decade`, numeric: true },
  ...METRIC_COLUMNS.map((k) => ({ key: k as SortKey, label: (_m: MetricName, u: TemperatureUnit) => `${METRICS[k].short} (${unitLabel(k, u)})`, numeric: true })),
  { key: 'dates', label: () => 'Clear dates day / night', numeric: true },
];

/** The value a row is sorted by in a column; null sorts last either way. */
export function sortValue(r: TableRow, key: SortKey): number | string | null {
  switch (key) {
    case 'rank': return r.rank;
    case 'name': return r.name;
    case 'value': return r.value;
    case 'rank_change': return r.rank_change;
    case 'trend': return r.trend?.slope_per_decade ?? null;
    case 'dates': return r.dates_day === null && r.dates_night === null ? null : (r.dates_day ?? 0) + (r.dates_night ?? 0);
    default: return r.metrics[key];
  }
}

export function sortRows(rows: readonly TableRow[], key: SortKey, dir: 'asc' | 'desc'): TableRow[] {
  const sign = dir === 'asc' ? 1 : -1;
  return [...rows].sort((a, b) => {
    const va = sortValue(a, key);
    const vb = sortValue(b, key);
    if (va === null && vb === null) return a.name.localeCompare(b.name);
    if (va === null) return 1;
    if (vb === null) return -1;
    const c = typeof va === 'string' || typeof vb === 'string' ? String(va).localeCompare(String(vb)) : va - vb;
    return c !== 0 ? sign * c : a.name.localeCompare(b.name);
  });
}

function rankChangeCell(r: TableRow): string {
  if (r.rank_change === null) return r.rank === null ? '<span class="muted">–</span>' : '<span class="muted" title="no rank the year before">new</span>';
  if (r.rank_change === 0) return '<span title="same rank as the year before">same</span>';
  const up = r.rank_change > 0;
  const n = Math.abs(r.rank_change);
  return `<span class="${up ? 'up' : 'down'}" title="${up ? 'moved up' : 'moved down'} ${n} place${n === 1 ? '' : 's'} (was ${r.previous_rank ?? '–'})"><span aria-hidden="true">${up ? '▲' : '▼'}</span> ${up ? 'up' : 'down'} ${n}</span>`;
}

/** Arrow and words for a trend; the number is the Sen slope per decade. */
export function trendCell(t: TrendFields | null, metric: MetricName, unit: TemperatureUnit): string {
  if (t === null || t.direction === null || t.slope_per_decade === null) return '<span class="muted" title="too few years to tell">too short</span>';
  const slope = formatValue(metric, t.slope_per_decade).replace(/^(?!\u2212)/, '+');
  const u = unitLabel(metric, unit);
  if (t.direction === 'increasing') return `<span class="trend rising" title="rising by ${esc(slope)} ${esc(u)} per decade; more than chance"><span aria-hidden="true">↑</span> rising ${esc(slope)}</span>`;
  if (t.direction === 'decreasing') return `<span class="trend falling" title="falling by ${esc(slope)} ${esc(u)} per decade; more than chance"><span aria-hidden="true">↓</span> falling ${esc(slope)}</span>`;
  return `<span class="trend flat" title="Sen slope ${esc(slope)} ${esc(u)} per decade; cannot be told from chance"><span aria-hidden="true">→</span> no clear trend</span>`;
}

export function tableHtml(rows: readonly TableRow[], o: { metric: MetricName; unit: TemperatureUnit; sort: SortKey; dir: 'asc' | 'desc'; selected: string | null; caption: string }): string {
  // the chosen metric has its own column ("value"); it is not repeated among the others
  const columns = COLUMNS.filter((c) => c.key !== o.metric);
  const sortKey: SortKey = o.sort === o.metric ? 'value' : o.sort;
  const head = columns.map((c) => {
    const sorted = c.key === sortKey;
    const aria = sorted ? (o.dir === 'asc' ? 'ascending' : 'descending') : 'none';
    const mark = sorted ? (o.dir === 'asc' ? '▲' : '▼') : '';
    return `<th scope="col" aria-sort="${aria}" class="${c.numeric ? 'num' : ''}" data-key="${c.key}"><button type="button" class="sort" data-sort="${c.key}">${esc(c.label(o.metric, o.unit))}<span class="sort-mark" aria-hidden="true">${mark}</span></button></th>`;
  }).join('');
  const sorted = sortRows(rows, sortKey, o.dir);
  // one row takes the Tab stop (the selected one, else the first); arrow keys move between rows
  const stop = sorted.some((r) => r.id === o.selected) ? o.selected : sorted[0]?.id;
  const body = sorted.map((r) => {
    const sel = r.id === o.selected;
    const cells = [
      `<td class="num">${r.rank ?? '–'}</td>`,
      `<th scope="row">${esc(r.name)}</th>`,
      `<td class="num strong">${esc(formatValue(o.metric, r.value))}</td>`,
      `<td class="num">${rankChangeCell(r)}</td>`,
      `<td class="num">${trendCell(r.trend, o.metric, o.unit)}</td>`,
      ...METRIC_COLUMNS.filter((k) => k !== o.metric).map((k) => `<td class="num">${esc(formatValue(k, r.metrics[k]))}</td>`),
      `<td class="num">${r.dates_day ?? '–'} / ${r.dates_night ?? '–'}</td>`,
    ];
    return `<tr tabindex="${r.id === stop ? 0 : -1}" data-id="${esc(r.id)}" aria-selected="${sel}"${sel ? ' class="selected"' : ''}>${cells.join('')}</tr>`;
  }).join('\n');
  return `<p class="small muted" id="districts-caption">${esc(o.caption)}</p><div class="table-wrap"><table class="districts" aria-describedby="districts-caption"><thead><tr>${head}</tr></thead><tbody>${body}</tbody></table></div>`;
}
