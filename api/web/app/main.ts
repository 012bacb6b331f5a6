/**
 * The web page: map, controls, district panel, table, hot spots, downloads and
 * cautions, all read from the heatledger API of the same server. The drawing
 * itself is the shared code of ../draw/ (SVG strings); this module fetches,
 * keeps the state in the address and wires the events.
 */
import {
  colourClasses, drawLegend, drawMap, drawSeriesChart, formatValue, METRIC_NAMES, METRICS, SERIES_COLOURS, SPOT_STYLE,
  toDisplay, trendSentence, unitLabel, type ChartSeries, type MapFeature, type MetricName, type SpotKind, type TemperatureUnit,
} from '../draw/index.js';
import { esc, formatNumber } from '../draw/svg.js';
import { api, ApiProblem, urls, type DistrictsAnswer, type HotspotsAnswer, type SeriesAnswer, type TrendFields } from './api.js';
import { parseState, stateToSearch, type SortKey, type ViewState } from './state.js';
import { yearScenesHtml } from './scenes.js';
import { tableHtml, type TableRow } from './table.js';

const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;

let state: ViewState = parseState(location.search);
/** The answers the current view was drawn from. */
let view: { districts: DistrictsAnswer; rows: TableRow[]; hotspots: HotspotsAnswer | null; hotspotsProblem: string | null; year: number } | null = null;
let loadToken = 0;
let selectToken = 0;

const SEASON_WORDS: Record<string, string> = { summer: 'summer', autumn: 'autumn', winter: 'winter', spring: 'spring', all: 'whole year' };

/** Day and night metrics drawn together in the district panel. */
function pairOf(metric: MetricName): MetricName[] {
  if (metric === 'lst_day' || metric === 'lst_night') return ['lst_day', 'lst_night'];
  if (metric === 'suhi_day' || metric === 'suhi_night') return ['suhi_day', 'suhi_night'];
  return ['ati'];
}

function setStatus(text: string, problem = false): void {
  const el = $('status');
  el.textContent = text;
  el.classList.toggle('problem', problem);
}

function go(next: Partial<ViewState>, push = true): void {
  state = { ...state, ...next };
  const search = stateToSearch(state);
  if (search !== location.search) {
    if (push) history.pushState(null, '', search);
    else history.replaceState(null, '', search);
  }
}

function fillControls(years: number[]): void {
  const metric = $<HTMLSelectElement>('metric');
  if (metric.options.length === 0) metric.innerHTML = METRIC_NAMES.map((m) => `<option value="${m}">${esc(METRICS[m].label)}</option>`).join('');
  metric.value = state.metric;
  const year = $<HTMLSelectElement>('year');
  year.innerHTML = [...years].sort((a, b) => b - a).map((y) => `<option value="${y}">${y}</option>`).join('');
  if (view) year.value = String(view.year);
  $<HTMLSelectElement>('season').value = state.season;
  for (const r of document.querySelectorAll<HTMLInputElement>('input[name="unit"]')) r.checked = r.value === state.unit;
  $<HTMLInputElement>('spots').checked = state.spots;
}

function showCaution(text: string): void {
  const sentences = text.split(/(?<=\.)\s+/).filter(Boolean);
  $('caution-list').innerHTML = sentences.map((s) => `<li>${esc(s)}</li>`).join('');
}

/** Fetch what the state asks for and draw everything. */
async function load(): Promise<void> {
  const token = ++loadToken;
  document.body.dataset.ready = 'false';
  setStatus('Loading…');
  try {
    let districts: DistrictsAnswer;
    let note = '';
    try {
      districts = await api.districts({ year: state.year, season: state.season, metric: state.metric });
    } catch (e) {
      // a year the address names may have no values in the season chosen (the API answers 404): show the latest that has
      if (!(e instanceof ApiProblem) || e.status !== 404 || state.year === null) throw e;
      note = `${state.year} has no values for the ${SEASON_WORDS[state.season]}; showing the latest year that has.`;
      districts = await api.districts({ year: null, season: state.season, metric: state.metric });
    }
    if (token !== loadToken) return;
    showCaution(districts.caution);
    const year = districts.year;
    if (year === null || districts.years.length === 0) {
      view = null;
      fillControls([]);
      $('map').innerHTML = '<p class="empty">No district values yet. Ingest an archive of scenes first (heatledger ingest), then reload this page.</p>';
      $('table').innerHTML = '';
      setStatus('');
      document.body.dataset.ready = 'true';
      return;
    }
    const [rankings, trends, hotspots] = await Promise.all([
      api.rankings({ year, season: state.season, metric: state.metric }),
      api.trends({ season: state.season, metric: state.metric }),
      // hot spots may be refused for a year with too few values: the page says so and draws the rest
      state.spots
        ? api.hotspots({ year, season: state.season, metric: state.metric }).catch((e: unknown) => (e instanceof ApiProblem ? e.message : String(e)))
        : Promise.resolve(null),
    ]);
    if (token !== loadToken) return;
    const rankOf = new Map(rankings.rows.map((r) => [r.district, r]));
    const trendOf = new Map(trends.rows.map((r) => [r.district, r]));
    const rows: TableRow[] = districts.features.filter((f) => f.properties.role !== 'rural').map((f) => {
      const p = f.properties;
      const rk = rankOf.get(f.id);
      const metrics = Object.fromEntries(METRIC_NAMES.map((m) => [m, toDisplay(m, p[METRICS[m].field], state.unit)])) as Record<MetricName, number | null>;
      return {
        id: f.id, name: p.name, rank: rk?.rank ?? null, value: metrics[state.metric], rank_change: rk?.rank_change ?? null,
        previous_rank: rk?.previous_rank ?? null, trend: trendOf.get(f.id) ?? null, metrics, dates_day: p.dates_day, dates_night: p.dates_night,
      };
    });
    view = { districts, rows, hotspots: typeof hotspots === 'string' ? null : hotspots, hotspotsProblem: typeof hotspots === 'string' ? hotspots : null, year };
    fillControls(districts.years);
    drawAll();
    setStatus(note);
    await drawPanel();
    if (token === loadToken) document.body.dataset.ready = 'true';
  } catch (e) {
    if (token !== loadToken) return;
    document.body.dataset.ready = 'error';
    setStatus(e instanceof ApiProblem ? e.message : `Something went wrong drawing the page: ${(e as Error).message}`, true);
  }
}

function drawAll(): void {
  if (!view) return;
  drawMapAndLegend();
  drawTable();
  const p = { year: view.year, season: state.season, metric: state.metric };
  const csv = $<HTMLAnchorElement>('dl-csv');
  csv.href = urls.districts(p, 'csv');
  csv.download = `districts-${state.metric}-${view.year}-${state.season}.csv`;
  const geo = $<HTMLAnchorElement>('dl-geojson');
  geo.href = urls.districts(p);
  geo.download = `districts-${state.metric}-${view.year}-${state.season}.geojson`;
}

function mapWidth(): number {
  const w = $('map').clientWidth || 600;
  return Math.max(280, Math.min(760, Math.floor(w)));
}

function drawMapAndLegend(): void {
  if (!view) return;
  const m = state.metric;
  const u = unitLabel(m, state.unit);
  const features: MapFeature[] = view.districts.features.map((f) => ({
    id: f.id, name: f.properties.name, role: f.properties.role, geometry: f.geometry,
    value: f.properties.role === 'rural' ? null : toDisplay(m, f.properties.value, state.unit),
  }));
  const classes = colourClasses(METRICS[m].palette, features.filter((f) => f.role !== 'rural').map((f) => f.value), u);
  const spots: Record<string, SpotKind> | undefined = view.hotspots ? Object.fromEntries(view.hotspots.rows.map((r) => [r.district, r.spot])) : undefined;
  const title = `${METRICS[m].label}, ${SEASON_WORDS[state.season]} ${view.year}`;
  $('map-heading').textContent = title;
  const fmt = (v: number | null) => (v === null ? 'no data' : `${formatValue(m, v)} ${u}`);
  const drawn = drawMap(features, { width: mapWidth(), classes, formatValue: fmt, title: `Map: ${title}`, selectedId: state.district, spots, idPrefix: 'map', fit: 'districts', margin: 0.02 });
  $('map').innerHTML = drawn.svg;
  const note = METRICS[m].kind === 'difference' ? 'below 0: cooler than the rural reference' : METRICS[m].kind === 'inertia' ? 'higher: the surface holds its heat longer' : undefined;
  $('legend').innerHTML = drawLegend(classes, { title: `${METRICS[m].short}, ${u}`, note, idPrefix: 'legend', width: 260, rural: drawn.ruralInView }).svg;
  drawSpotsKey();
}

function drawSpotsKey(): void {
  const key = $('spots-key');
  const h = view?.hotspots;
  if (state.spots && view?.hotspotsProblem) {
    key.innerHTML = `<h3>Hot and cold spots (Gi*)</h3><p class="problem">${esc(view.hotspotsProblem)}</p>`;
    key.hidden = false;
    return;
  }
  if (!state.spots || !h) {
    key.hidden = true;
    key.innerHTML = '';
    return;
  }
  const list = (kind: 'hot' | 'cold') => h.rows.filter((r) => r.spot === kind).map((r) => `${esc(r.name)}${r.confidence ? ` (${r.confidence} %)` : ''}`).join(', ') || 'none';
  const line = (kind: 'hot' | 'cold') => {
    const s = SPOT_STYLE[kind];
    return `<svg width="34" height="14" aria-hidden="true"><line x1="2" y1="7" x2="32" y2="7" stroke="${s.stroke}" stroke-width="${s.width}"${s.dash ? ` stroke-dasharray="${s.dash}"` : ''}/></svg>`;
  };
  const moran = h.moran
    ? `<p class="small">Across the city, neighbouring districts are ${h.moran.p <= 0.05 && h.moran.i > h.moran.expected ? 'more alike than chance would give' : 'not clearly more alike than chance'} (Moran's I ${formatNumber(h.moran.i, 2)}, p ${h.moran.p < 0.001 ? '< 0.001' : h.moran.p.toFixed(3)}).</p>`
    : '';
  key.innerHTML = `<h3>Hot and cold spots (Gi*)</h3>
<p>${line('hot')} Hot spot: a district and its neighbours are warmer than the city as a whole: ${list('hot')}.</p>
<p>${line('cold')} Cold spot: cooler together: ${list('cold')}.</p>${moran}
${h.left_out.length ? `<p class="small muted">Left out (no value or no neighbour): ${h.left_out.map((id) => esc(view?.rows.find((r) => r.id === id)?.name ?? id)).join(', ')}.</p>` : ''}`;
  key.hidden = false;
}

function drawTable(): void {
  if (!view) return;
  const caption = `${METRICS[state.metric].label}, ${SEASON_WORDS[state.season]} ${view.year}: rank 1 is the highest value.`;
  $('table').innerHTML = tableHtml(view.rows, { metric: state.metric, unit: state.unit, sort: state.sort, dir: state.dir, selected: state.district, caption });
}

/** The selected district's years, trend sentence and chart. */
async function drawPanel(): Promise<void> {
  const body = $('panel-body');
  const heading = $('panel-heading');
  const id = state.district;
  const row = view?.rows.find((r) => r.id === id);
  if (!view || !id || !row) {
    heading.textContent = 'Pick a district';
    body.innerHTML = '<p class="muted">Click a district on the map, or press Enter on a row of the table, to see its yearly values and whether they are changing.</p>';
    return;
  }
  heading.textContent = row.name;
  const metrics = pairOf(state.metric);
  const token = loadToken;
  body.innerHTML = '<p class="muted">Loading its years…</p>';
  let answers: SeriesAnswer[];
  try {
    answers = await Promise.all(metrics.map((m) => api.series(id, { metric: m, season: state.season })));
  } catch (e) {
    body.innerHTML = `<p class="problem">${esc(e instanceof ApiProblem ? e.message : String(e))}</p>`;
    return;
  }
  if (token !== loadToken || state.district !== id) return;
  const u = state.unit;
  const chartSeries: ChartSeries[] = answers.map((a, i) => {
    const m = metrics[i];
    const shift = (v: number | null) => toDisplay(m, v, u);
    const t = a.trend;
    return {
      key: m.endsWith('_night') ? 'night' : 'day',
      label: m === 'ati' ? 'ATI' : m.endsWith('_night') ? 'Night' : 'Day',
      points: a.points.map((p) => ({ year: p.year, value: shift(p.value), leftOut: p.in_trend === false })),
      trend: { pivot_year: t.pivot_year, pivot_value: shift(t.pivot_value), slope_per_year: t.slope_per_year, slope_ci_lower: t.slope_ci_lower, slope_ci_upper: t.slope_ci_upper },
      colour: m.endsWith('_night') ? SERIES_COLOURS.night : SERIES_COLOURS.day,
      marker: m.endsWith('_night') ? 'square' : 'circle',
    };
  });
  const chosen = metrics.indexOf(state.metric);
  const order = [chosen, ...metrics.map((_, i) => i).filter((i) => i !== chosen)];
  const sentences = order.map((i) => {
    const m = metrics[i];
    const text = trendSentence(METRICS[m].short, unitLabel(m, u), answers[i].trend as TrendFields);
    return `<p class="sentence${i === chosen ? ' main' : ''}" data-metric="${m}">${esc(text)}</p>`;
  }).join('');
  const unitText = unitLabel(metrics[0], u);
  const chartTitle = `${row.name}: ${metrics.map((m) => METRICS[m].short).join(' and ')} by year, ${SEASON_WORDS[state.season]}`;
  const width = Math.max(260, Math.min(560, body.clientWidth || 480));
  const chart = drawSeriesChart(chartSeries, { width, title: chartTitle, unit: unitText, formatValue: (v) => `${formatValue(metrics[0], v)} ${unitText}` }).svg;
  const years = [...new Set(answers.flatMap((a) => a.points.map((p) => p.year)))].sort((a, b) => a - b);
  const valueAt = (a: SeriesAnswer, y: number) => a.points.find((p) => p.year === y);
  const yearRows = years.map((y) => {
    const cells = answers.map((a, i) => {
      const p = valueAt(a, y);
      const out = p?.in_trend === false && p.value !== null ? ' <span class="muted" title="left out of the trend: too few clear dates">*</span>' : '';
      return `<td class="num">${esc(formatValue(metrics[i], toDisplay(metrics[i], p?.value ?? null, u)))}${out}</td><td class="num">${p?.dates ?? '–'}</td>`;
    }).join('');
    return `<tr><th scope="row">${y}</th>${cells}<td><button type="button" class="link scenes" data-year="${y}" aria-expanded="false">scenes</button></td></tr>
<tr class="scenes-row" data-year="${y}" hidden><td colspan="${2 + answers.length * 2}"></td></tr>`;
  }).join('');
  const head = metrics.map((m) => `<th scope="col" class="num">${esc(METRICS[m].short)} (${esc(unitLabel(m, u))})</th><th scope="col" class="num">dates</th>`).join('');
  const trend = answers[Math.max(0, chosen)].trend;
  body.innerHTML = `${sentences}
<figure class="chart">${chart}<figcaption class="small muted">${esc(figureNote(trend))}</figcaption></figure>
<p class="small muted" id="years-note">Each year's mean and the clear dates behind it (* left out of the trend); the scenes of a year are one click away.</p>
<div class="table-wrap"><table class="years" aria-describedby="years-note"><thead><tr><th scope="col">Year</th>${head}<th scope="col"><span class="sr">Scenes</span></th></tr></thead><tbody>${yearRows}</tbody></table></div>`;
}

/** The line under the chart: what is drawn, the years used and any note of the trend. */
function figureNote(t: TrendFields): string {
  const parts = ['Points: yearly means (faint: left out of the trend).'];
  if (t.slope_per_year !== null && t.pivot_year !== null) parts.push(`Line: Sen slope through the median year and value; shaded: its ${Math.round((1 - t.alpha) * 100)} % interval.`);
  if (t.years_used) parts.push(`Years used: ${t.years_used}.`);
  if (t.note) parts.push(`${t.note.charAt(0).toUpperCase()}${t.note.slice(1)}.`);
  return parts.join(' ');
}

async function toggleScenes(button: HTMLButtonElement): Promise<void> {
  const year = Number(button.dataset.year);
  const row = document.querySelector<HTMLTableRowElement>(`tr.scenes-row[data-year="${year}"]`);
  if (!row || !state.district) return;
  const open = button.getAttribute('aria-expanded') === 'true';
  button.setAttribute('aria-expanded', String(!open));
  row.hidden = open;
  if (open) return;
  const cell = row.cells[0];
  cell.innerHTML = '<span class="muted">Loading the scenes…</span>';
  try {
    const id = state.district;
    const answer = await api.scenes({ from: `${year}-01-01`, to: `${year}-12-31` });
    cell.innerHTML = yearScenesHtml(answer.rows, id, year);
  } catch (e) {
    cell.innerHTML = `<span class="problem">${esc(e instanceof ApiProblem ? e.message : String(e))}</span>`;
  }
}

function select(id: string | null): void {
  go({ district: id });
  drawMapAndLegend();
  drawTable();
  const token = loadToken;
  const mine = ++selectToken;
  document.body.dataset.ready = 'false';
  void drawPanel().finally(() => { if (token === loadToken && mine === selectToken) document.body.dataset.ready = 'true'; });
}

function wire(): void {
  const form = $<HTMLFormElement>('controls');
  form.addEventListener('submit', (e) => e.preventDefault());
  form.addEventListener('change', (e) => {
    const t = e.target as HTMLInputElement | HTMLSelectElement;
    if (t.name === 'metric') { go({ metric: t.value as MetricName }); void load(); }
    else if (t.name === 'year') { go({ year: Number(t.value) }); void load(); }
    else if (t.name === 'season') { go({ season: t.value as ViewState['season'] }); void load(); }
    else if (t.name === 'unit') { go({ unit: t.value as TemperatureUnit }); void load(); }
    else if (t.name === 'spots') { go({ spots: (t as HTMLInputElement).checked }); void load(); }
  });

  const map = $('map');
  map.addEventListener('click', (e) => {
    const path = (e.target as Element).closest('path.hl-district');
    if (path) select(path.getAttribute('data-id'));
  });
  map.addEventListener('mouseover', (e) => {
    const path = (e.target as Element).closest('path.hl-district');
    if (!path) return;
    const title = path.querySelector('title')?.textContent ?? '';
    $('hover').textContent = title;
  });

  const table = $('table');
  table.addEventListener('click', (e) => {
    const target = e.target as Element;
    const sort = target.closest<HTMLButtonElement>('button.sort');
    if (sort) {
      const key = sort.dataset.sort as SortKey;
      const dir = state.sort === key ? (state.dir === 'asc' ? 'desc' : 'asc') : key === 'name' || key === 'rank' ? 'asc' : 'desc';
      go({ sort: key, dir }, false);
      drawTable();
      document.querySelector<HTMLButtonElement>(`#table button.sort[data-sort="${key}"]`)?.focus();
      return;
    }
    const tr = target.closest<HTMLTableRowElement>('tbody tr[data-id]');
    if (tr) select(tr.dataset.id ?? null);
  });
  table.addEventListener('keydown', (e) => {
    const tr = (e.target as Element).closest<HTMLTableRowElement>('tbody tr[data-id]');
    if (!tr) return;
    if (e.key === 'Enter' || e.key === ' ') {
      e.preventDefault();
      const id = tr.dataset.id ?? null;
      select(id);
      document.querySelector<HTMLTableRowElement>(`#table tr[data-id="${CSS.escape(id ?? '')}"]`)?.focus();
    } else if (e.key === 'ArrowDown' || e.key === 'ArrowUp' || e.key === 'Home' || e.key === 'End') {
      e.preventDefault();
      const rows = [...table.querySelectorAll<HTMLTableRowElement>('tbody tr[data-id]')];
      const i = rows.indexOf(tr);
      const j = e.key === 'Home' ? 0 : e.key === 'End' ? rows.length - 1 : Math.max(0, Math.min(rows.length - 1, i + (e.key === 'ArrowDown' ? 1 : -1)));
      for (const r of rows) r.tabIndex = -1;
      rows[j].tabIndex = 0;
      rows[j].focus();
    }
  });

  $('panel-body').addEventListener('click', (e) => {
    const b = (e.target as Element).closest<HTMLButtonElement>('button.scenes');
    if (b) void toggleScenes(b);
  });

  window.addEventListener('popstate', () => {
    state = parseState(location.search);
    void load();
  });

  let pending = 0;
  let lastWidth = window.innerWidth;
  window.addEventListener('resize', () => {
    if (window.innerWidth === lastWidth) return;
    lastWidth = window.innerWidth;
    cancelAnimationFrame(pending);
    pending = requestAnimationFrame(() => { drawMapAndLegend(); void drawPanel(); });
  });
}

wire();
void load();
