/**
 * The small web page: yearly district table with SUHI bars. Server-rendered,
 * no scripts; its stylesheet is a separate file (`PAGE_CSS`, served at
 * `PAGE_CSS_PATH`) and the markup holds no inline style, so the page works
 * under a Content-Security-Policy that allows only 'self'.
 */
import type { Row } from '../workers/format.js';

const esc = (s: unknown) => String(s ?? '').replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
const fmt = (v: unknown, d: number) => {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '–';
  const s = v.toFixed(d);
  return /^-0\.?0*$/.test(s) ? s.slice(1) : s;
};

export const PAGE_CSS_PATH = '/page.css';

/** The page's stylesheet, served as its own file. */
export const PAGE_CSS = `body{font:15px/1.4 system-ui,sans-serif;margin:2rem;color:#222;max-width:72rem}
h1{font-size:1.4rem;margin:0 0 .3rem}
p.caution{background:#fff4e5;border-left:4px solid #e8a33d;padding:.6rem .8rem}
table{border-collapse:collapse;width:100%;margin-top:1rem}
th,td{padding:.3rem .5rem;border-bottom:1px solid #ddd;text-align:left}
td.n{text-align:right;font-variant-numeric:tabular-nums}
td.b{width:12%}
.bar{display:inline-block;height:.7rem}
.bar.day{background:#d9534f}.bar.night{background:#4a6fa5}
.bar.neg{background:repeating-linear-gradient(45deg,#9bb7d4,#9bb7d4 3px,#fff 3px,#fff 5px)}
small{color:#666}
${Array.from({ length: 101 }, (_, i) => `.w${i}{width:${i}%}`).join('')}
`;

export function renderPage(yearRows: Row[], caution: string): string {
  const years = [...new Set(yearRows.map((r) => Number(r.year)))].sort();
  const latest = years[years.length - 1];
  const rows = yearRows.filter((r) => Number(r.year) === latest && r.district !== 'rural')
    .sort((a, b) => (Number(b.suhi_day_k ?? -Infinity) - Number(a.suhi_day_k ?? -Infinity)));
  const maxAbs = Math.max(1, ...rows.flatMap((r) => [Math.abs(Number(r.suhi_day_k ?? 0)), Math.abs(Number(r.suhi_night_k ?? 0))]));
  // bar lengths are whole-percent classes (w0 ... w100) defined in the stylesheet: no style attributes
  const bar = (v: unknown, cls: string) =>
    typeof v === 'number' && Number.isFinite(v) ? `<span class="bar ${cls}${v < 0 ? ' neg' : ''} w${Math.round((Math.abs(v) / maxAbs) * 100)}" title="${v < 0 ? 'cooler than the rural reference' : 'warmer than the rural reference'}"></span>` : '';
  const body = rows.map((r) => `<tr><td>${esc(r.name)}</td><td class="n">${fmt(r.lst_day_k, 1)}</td><td class="n">${fmt(r.lst_night_k, 1)}</td>
<td class="n">${fmt(r.suhi_day_k, 2)}</td><td class="b">${bar(r.suhi_day_k, 'day')}</td><td class="n">${fmt(r.suhi_night_k, 2)}</td><td class="b">${bar(r.suhi_night_k, 'night')}</td>
<td class="n">${fmt(r.ati_per_k, 4)}</td><td class="n">${esc(r.dates)}</td></tr>`).join('\n');
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>heatledger: district heat table</title>
<meta name="viewport" content="width=device-width, initial-scale=1">
<link rel="stylesheet" href="${PAGE_CSS_PATH}"></head><body>
<h1>District surface heat, ${esc(latest ?? 'no data yet')}</h1>
<small>Means over the year's clear-enough dates. LST and SUHI in kelvin (SUHI = district minus rural reference); ATI in 1/K. Hatched bars: cooler than the rural reference. Data: <a href="/api/table?level=year&amp;format=csv">CSV by year</a> · <a href="/api/table?level=date&amp;format=csv">CSV by date</a></small>
<p class="caution">${esc(caution)}</p>
<table><thead><tr><th>District</th><th>LST day K</th><th>LST night K</th><th colspan="2">SUHI day K</th><th colspan="2">SUHI night K</th><th>ATI 1/K</th><th>dates</th></tr></thead>
<tbody>
${body || '<tr><td colspan="9">No derived rows yet: run <code>heatledger ingest</code>.</td></tr>'}
</tbody></table>
</body></html>
`;
}
