/**
 * The web page in headless Chromium (Debian's package, driven by
 * playwright-core), against `heatledger serve` on a store made from a small
 * generated archive of the invented city: 8 summers, four day/night pairs each
 * (a trend year needs 3 clear dates),
 * Merrowin Vale (D16) warming by 0.6 K a year and no other district warming. The
 * night passes arrive as Level-1 thermal DN with a metadata file (the generator gives
 * every night but the last of a summer its atmosphere in the manifest), so the list
 * of a year's scenes shows passes corrected for the atmosphere and passes not.
 *
 * Every expected value is read from the API of the same server (the page must
 * show what the API answers), never from the page's own code: legend classes
 * are parsed from the legend's printed ranges, sentences are checked against
 * the trend fields, table orders against the API's values.
 *
 * Screenshots at desktop and phone width are written to test/e2e/.artefacts/
 * (or HEATLEDGER_ARTEFACTS_DIR), which git ignores.
 */
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromium, type Browser, type Page } from 'playwright-core';
import { cleanEnv, cliOk, ensurePipelineBuild, killAllChildren, makeArchive, repoRoot, startCliUntil, stopChild, type StartedCli } from '../support/pipeline-harness.js';
import { ensurePageBuild } from '../support/page-build.js';
import { CHROMIUM_PATH, toolAvailable } from '../support/services.js';
import { CHROMIUM_ARGS } from '../../api/report/pdf.js';

const SUITE = 'test/e2e/page.test.ts (the web page in Chromium)';
const hasChromium = toolAvailable('chromium', SUITE);
const ARTEFACTS = process.env.HEATLEDGER_ARTEFACTS_DIR ?? path.join(repoRoot, 'test', 'e2e', '.artefacts');
const WARMING = 'D16';

let tmp = '';
let server: StartedCli | null = null;
let origin = '';
let browser: Browser | null = null;
let page: Page;
/** Every address the pages of this file asked for. */
const requested: string[] = [];
/** Console lines that name the Content Security Policy (a blocked script, style or request). */
const policyViolations: string[] = [];

interface Feature { id: string; properties: Record<string, unknown> & { name: string; role: string; value: number | null } }
interface DistrictsAnswer { year: number; years: number[]; caution: string; next_cursor: string | null; features: Feature[] }
interface Trend { n: number; slope_per_decade: number | null; slope_ci_lower_per_decade: number | null; slope_ci_upper_per_decade: number | null; direction: string | null; alpha: number; districts_tested: number }
interface SeriesAnswer { points: { year: number; value: number | null }[]; trend: Trend }

async function apiJson<T>(pathAndQuery: string): Promise<T> {
  const r = await fetch(`${origin}${pathAndQuery}`);
  expect(r.status, pathAndQuery).toBe(200);
  return (await r.json()) as T;
}

async function districtsOf(year: number, metric: string, season = 'summer'): Promise<DistrictsAnswer> {
  const d = await apiJson<DistrictsAnswer>(`/api/districts?year=${year}&season=${season}&metric=${metric}`);
  expect(d.next_cursor).toBeNull(); // 17 districts fit one page of the default limit
  return d;
}

async function ready(p: Page): Promise<void> {
  await p.waitForSelector('body[data-ready="true"]', { timeout: 120_000 });
}

/** Parses a legend label ("below 2 K", "2 to 4 K", "4 K and above", "no data") into a half-open range. */
function labelRange(label: string): { lo: number; hi: number } | null {
  const num = (s: string) => Number(s.replace('\u2212', '-'));
  const n = '([\u2212-]?[0-9.]+)';
  let m = new RegExp(`^below ${n}`).exec(label);
  if (m) return { lo: -Infinity, hi: num(m[1]) };
  m = new RegExp(`^${n} to ${n}`).exec(label);
  if (m) return { lo: num(m[1]), hi: num(m[2]) };
  m = new RegExp(`^${n}\\S* ?\\S* and above`).exec(label);
  if (m) return { lo: num(m[1]), hi: Infinity };
  if (label.startsWith('all values')) return { lo: -Infinity, hi: Infinity };
  return null;
}

interface DrawnMap { paths: { id: string; fill: string }[]; legend: { key: string; fill: string | null; label: string }[]; title: string }

async function drawnMap(p: Page): Promise<DrawnMap> {
  return p.evaluate(() => ({
    paths: [...document.querySelectorAll('#map path.hl-district')].map((e) => ({ id: e.getAttribute('data-id') ?? '', fill: e.getAttribute('fill') ?? '' })),
    legend: [...document.querySelectorAll('#legend g.hl-legend-row')].map((g) => ({ key: g.getAttribute('data-class') ?? '', fill: g.querySelector('rect')?.getAttribute('fill') ?? null, label: g.querySelector('text')?.textContent ?? '' })),
    title: document.getElementById('map-heading')?.textContent ?? '',
  }));
}

/** Each district's fill is the fill of the legend row whose printed range holds the API's value (hatched when it has none). */
function expectFillsMatchLegend(drawn: DrawnMap, api: DistrictsAnswer, toShown: (v: number) => number = (v) => v): void {
  const districts = api.features.filter((f) => f.properties.role !== 'rural');
  expect(drawn.paths.map((x) => x.id).sort()).toEqual(districts.map((f) => f.id).sort());
  const classes = drawn.legend.filter((r) => r.key !== 'none' && r.key !== 'rural').map((r) => ({ ...r, range: labelRange(r.label) }));
  expect(classes.length).toBeGreaterThan(0);
  for (const c of classes) expect(c.range, c.label).not.toBeNull();
  const noData = drawn.legend.find((r) => r.key === 'none');
  for (const f of districts) {
    const fill = drawn.paths.find((x) => x.id === f.id)?.fill;
    const v = f.properties.value;
    if (v === null) {
      expect(fill, f.id).toMatch(/^url\(#/);
      expect(noData?.fill, 'no-data swatch').toMatch(/^url\(#/);
      continue;
    }
    const shown = toShown(v);
    // the legend prints its breaks exactly; the value sits in the one row with lo <= v < hi
    const row = classes.find((c) => c.range!.lo <= shown && shown < c.range!.hi);
    expect(row, `${f.id} ${shown}`).toBeDefined();
    expect(fill, `${f.id} ${shown} in "${row!.label}"`).toBe(row!.fill);
  }
}

/** A point inside the fill of a district's path, in viewport coordinates (found by the browser's own hit test). */
async function pointInDistrict(p: Page, id: string): Promise<{ x: number; y: number }> {
  await p.locator('#map').scrollIntoViewIfNeeded();
  const pt = await p.evaluate((districtId) => {
    const path = document.querySelector(`#map path.hl-district[data-id="${districtId}"]`) as SVGPathElement | null;
    if (!path) return null;
    const box = path.getBBox();
    const ctm = path.getScreenCTM();
    const svg = path.ownerSVGElement;
    if (!ctm || !svg) return null;
    for (let i = 1; i < 20; i++) {
      for (let j = 1; j < 20; j++) {
        const q = svg.createSVGPoint();
        q.x = box.x + (box.width * i) / 20;
        q.y = box.y + (box.height * j) / 20;
        if (!path.isPointInFill(q)) continue;
        const s = q.matrixTransform(ctm);
        const hit = document.elementFromPoint(s.x, s.y);
        if (hit === path) return { x: s.x, y: s.y };
      }
    }
    return null;
  }, id);
  expect(pt, `a clickable point inside ${id}`).not.toBeNull();
  return pt!;
}

/** The numbers a sentence prints, in order (true minus signs read as minus). */
function numbersIn(text: string): number[] {
  return [...text.replace(/\u2212/g, '-').matchAll(/-?[0-9]+(?:\.[0-9]+)?/g)].map((m) => Number(m[0]));
}

/** The trend sentence says what the API's trend result says, with its numbers (as rounded for print). */
function expectSentenceMatches(sentence: string, t: Trend, subject: string): void {
  const close = (printed: number, value: number) => expect(Math.abs(printed - value), `${printed} vs ${value} in "${sentence}"`).toBeLessThanOrEqual(0.051);
  if (t.direction === null || t.slope_per_decade === null) {
    expect(sentence).toMatch(/too short/);
    return;
  }
  const pct = Math.round((1 - t.alpha) * 100);
  const nums = numbersIn(sentence);
  expect(sentence).toContain(`the city's ${t.districts_tested} districts`);
  expect(sentence).toContain(`${pct} % interval`);
  if (t.direction === 'increasing' || t.direction === 'decreasing') {
    expect(sentence.startsWith(`${subject} ${t.direction === 'increasing' ? 'rose' : 'fell'} by `), sentence).toBe(true);
    expect(sentence).toMatch(/this is more than chance/);
    // "rose by S K per decade (95 % interval L to U); ... N districts"
    close(nums[0], Math.abs(t.slope_per_decade));
    const [lo, hi] = t.direction === 'increasing' ? [t.slope_ci_lower_per_decade!, t.slope_ci_upper_per_decade!] : [-t.slope_ci_upper_per_decade!, -t.slope_ci_lower_per_decade!];
    close(nums[2], lo);
    close(nums[3], hi);
  } else {
    expect(sentence).toMatch(/^No trend in .* can be told from chance/);
    // "... N districts (Sen slope S K per decade, 95 % interval L to U)."
    const after = numbersIn(sentence.slice(sentence.indexOf('Sen slope')));
    close(after[0], t.slope_per_decade);
    close(after[2], t.slope_ci_lower_per_decade!);
    close(after[3], t.slope_ci_upper_per_decade!);
  }
}

beforeAll(async () => {
  if (!hasChromium) return;
  await ensurePipelineBuild();
  await ensurePageBuild();
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-page-'));
  const archive = await makeArchive(path.join(tmp, 'archive'), { years: 8, pairsPerYear: 4, pixelSizeMetres: 500, trendsKelvinPerYear: { [WARMING]: 0.6 }, nightAsThermal: true });
  const dataDir = path.join(tmp, 'store');
  await cliOk(['ingest', path.join(tmp, 'archive'), '--districts', archive.districtsPath, '--manifest', archive.manifestPath as string,
    '--data-dir', dataDir, '--no-progress', '--threads', '1'], cleanEnv(), 300_000);
  // port 0: a free port from the system; serve prints the one it got
  server = await startCliUntil(['serve', '--port', '0', '--data-dir', dataDir], cleanEnv({ LOG_LEVEL: 'warn' }), /heatledger API on http:\/\/[^\s/]+:\d+\//);
  const port = /heatledger API on http:\/\/[^\s/]+:(\d+)\//.exec(server.stderr())![1];
  origin = `http://127.0.0.1:${port}`;
  browser = await chromium.launch({ executablePath: CHROMIUM_PATH, args: [...CHROMIUM_ARGS], timeout: 180_000 });
  mkdirSync(ARTEFACTS, { recursive: true });
}, 900_000);

afterAll(async () => {
  await browser?.close();
  if (server) await stopChild(server.child, 'SIGTERM');
  await killAllChildren();
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

/** A new page of its own context, recording every request and policy message. */
async function openPage(url: string, width: number, height = 900): Promise<Page> {
  const context = await browser!.newContext({ viewport: { width, height } });
  const p = await context.newPage();
  p.on('request', (r) => requested.push(r.url()));
  p.on('console', (m) => { if (/Content.Security.Policy/i.test(m.text())) policyViolations.push(m.text()); });
  p.on('pageerror', (e) => policyViolations.push(`page error: ${e.message}`));
  await p.goto(`${origin}${url}`);
  await ready(p);
  return p;
}

describe.skipIf(!hasChromium)('the web page', () => {
  let latest = 0;

  it('draws one map shape per district, each filled with the legend class of its API value', async () => {
    page = await openPage('/', 1280);
    const health = await apiJson<{ years: number[] }>('/api/health');
    latest = Math.max(...health.years);
    expect(health.years).toHaveLength(8);
    const api = await districtsOf(latest, 'suhi_night');
    expect(api.year).toBe(latest);
    expectFillsMatchLegend(await drawnMap(page), api);
    // the rural reference is an outline, not a filled district
    expect(await page.locator('#map path.hl-rural').count()).toBe(1);
    expect(await page.locator('#map path.hl-rural').getAttribute('fill')).toBe('none');
    // its dashed outline, which the legend and the notes name, shows inside the map's view: points along
    // the drawn path (SVGGeometryElement.getPointAtLength) that fall within the viewBox
    const inView = await page.evaluate(() => {
      const svg = document.querySelector('#map svg') as SVGSVGElement;
      const rural = svg.querySelector('path.hl-rural') as SVGPathElement;
      const { width, height } = svg.viewBox.baseVal;
      const total = rural.getTotalLength();
      let n = 0;
      for (let i = 0; i <= 2000; i++) {
        const q = rural.getPointAtLength((total * i) / 2000);
        if (q.x >= 0 && q.x <= width && q.y >= 0 && q.y <= height) n++;
      }
      return n;
    });
    expect(inView).toBeGreaterThan(100);
    expect(await page.locator('#legend g.hl-legend-row[data-class="rural"]').count()).toBe(1);
    // the cautions are the API's, shown above the map
    const caution = await page.locator('#caution-list').innerText();
    for (const sentence of api.caution.split(/(?<=\.)\s+/)) expect(caution).toContain(sentence);
    expect(caution).toMatch(/skin/);
  });

  it('an address naming a year without values (the API answers 404) shows the latest year that has them, and says so', async () => {
    const refused = await fetch(`${origin}/api/districts?year=2031&season=summer&metric=suhi_night`);
    expect(refused.status).toBe(404);
    const p = await openPage('/?metric=suhi_night&year=2031', 1280);
    try {
      expect(await p.locator('#year').inputValue()).toBe(String(latest));
      expect(await p.locator('#status').innerText()).toBe('2031 has no values for the summer; showing the latest year that has.');
      expectFillsMatchLegend(await drawnMap(p), await districtsOf(latest, 'suhi_night'));
    } finally {
      await p.context().close();
    }
  });

  it('clicking a district shows its years (one point per year) and the sentence of the API trend', async () => {
    const name = (await districtsOf(latest, 'suhi_night')).features.find((f) => f.id === WARMING)!.properties.name;
    const at = await pointInDistrict(page, WARMING);
    await page.mouse.move(at.x, at.y);
    await page.waitForFunction((n) => document.getElementById('hover')?.textContent?.startsWith(`${n}:`), name);
    await page.mouse.click(at.x, at.y);
    await page.waitForFunction((n) => document.getElementById('panel-heading')?.textContent === n, name);
    await ready(page);
    expect(new URL(page.url()).searchParams.get('district')).toBe(WARMING);

    const night = await apiJson<SeriesAnswer>(`/api/districts/${WARMING}/series?metric=suhi_night&season=summer`);
    const day = await apiJson<SeriesAnswer>(`/api/districts/${WARMING}/series?metric=suhi_day&season=summer`);
    const drawnYears = async (series: string) => page.$$eval(`#panel-body .hl-point[data-series="${series}"]`, (els) => els.map((e) => Number(e.getAttribute('data-year'))));
    expect(await drawnYears('night')).toEqual(night.points.filter((p) => p.value !== null).map((p) => p.year));
    expect(await drawnYears('day')).toEqual(day.points.filter((p) => p.value !== null).map((p) => p.year));
    // the built-in warming of 0.6 K a year is found: the sentence says it rose
    expect(night.trend.direction).toBe('increasing');
    const sentence = await page.locator('#panel-body .sentence.main').innerText();
    expectSentenceMatches(sentence, night.trend, 'Night SUHI');
    const daySentence = await page.locator('#panel-body .sentence[data-metric="suhi_day"]').innerText();
    expectSentenceMatches(daySentence, day.trend, 'Day SUHI');
    // the Sen line and its band are drawn when there is a trend line
    expect(await page.locator('#panel-body line.hl-sen[data-series="night"]').count()).toBe(1);
    expect(await page.locator('#panel-body polygon.hl-band[data-series="night"]').count()).toBe(1);
    await page.screenshot({ path: path.join(ARTEFACTS, 'page-desktop.png'), fullPage: true });
  });

  it('pressing Enter on a table row selects that district, map and table together', async () => {
    const api = await districtsOf(latest, 'suhi_night');
    const other = api.features.find((f) => f.properties.role !== 'rural' && f.id !== WARMING && f.properties.value !== null)!;
    const row = page.locator(`#table tbody tr[data-id="${other.id}"]`);
    await row.focus();
    await page.keyboard.press('Enter');
    await page.waitForFunction((n) => document.getElementById('panel-heading')?.textContent === n, other.properties.name);
    await ready(page);
    const series = await apiJson<SeriesAnswer>(`/api/districts/${other.id}/series?metric=suhi_night&season=summer`);
    expect(await page.$$eval('#panel-body .hl-point[data-series="night"]', (els) => els.length)).toBe(series.points.filter((p) => p.value !== null).length);
    expectSentenceMatches(await page.locator('#panel-body .sentence.main').innerText(), series.trend, 'Night SUHI');
    expect(await page.locator('#map path.hl-selected').getAttribute('data-id')).toBe(other.id);
    expect(await page.locator(`#table tbody tr[data-id="${other.id}"]`).getAttribute('aria-selected')).toBe('true');
    // arrow keys move between rows; focus stays in the table
    await page.locator(`#table tbody tr[data-id="${other.id}"]`).focus();
    await page.keyboard.press('ArrowDown');
    expect(await page.evaluate(() => document.activeElement?.closest('#table tbody tr') !== null)).toBe(true);
  });

  it('changing metric and year changes the address and the map; loading that address restores the same view', async () => {
    const before = await drawnMap(page);
    await page.selectOption('#metric', 'lst_day');
    await ready(page);
    await page.selectOption('#year', String(latest - 1));
    await ready(page);
    const url = new URL(page.url());
    expect(url.searchParams.get('metric')).toBe('lst_day');
    expect(url.searchParams.get('year')).toBe(String(latest - 1));
    const after = await drawnMap(page);
    expect(after.title).not.toBe(before.title);
    expect(after.legend.map((r) => r.label)).not.toEqual(before.legend.map((r) => r.label));
    expectFillsMatchLegend(after, await districtsOf(latest - 1, 'lst_day'));

    const again = await openPage(`${url.pathname}${url.search}`, 1280);
    expect(await again.locator('#metric').inputValue()).toBe('lst_day');
    expect(await again.locator('#year').inputValue()).toBe(String(latest - 1));
    expect(await drawnMap(again)).toEqual(after);
    expect(await again.locator('#panel-heading').innerText()).toBe(await page.locator('#panel-heading').innerText());
    await again.context().close();
  });

  it('shows temperatures in °C when asked, with the same classes shifted by 273.15', async () => {
    await page.check('input[name="unit"][value="C"]');
    await ready(page);
    expect(new URL(page.url()).searchParams.get('unit')).toBe('C');
    // 0 °C = 273.15 K (BIPM, SI Brochure, 9th ed., 2019, section 2.3.1)
    expectFillsMatchLegend(await drawnMap(page), await districtsOf(latest - 1, 'lst_day'), (k) => k - 273.15);
    expect((await drawnMap(page)).legend[0].label).toMatch(/°C$/);
    await page.check('input[name="unit"][value="K"]');
    await ready(page);
  });

  it('sorting the table by a column orders it by the API values', async () => {
    const api = await districtsOf(latest - 1, 'lst_day');
    const valueOf = new Map(api.features.map((f) => [f.id, f.properties.lst_night_k as number | null]));
    const order = () => page.$$eval('#table tbody tr[data-id]', (rows) => rows.map((r) => r.getAttribute('data-id') ?? ''));
    const check = (ids: string[], dir: 'asc' | 'desc') => {
      const values = ids.map((id) => valueOf.get(id) ?? null);
      const present = values.filter((v): v is number => v !== null);
      // districts without a value come last, either way
      expect(values.slice(present.length).every((v) => v === null)).toBe(true);
      for (let i = 1; i < present.length; i++) {
        if (dir === 'desc') expect(present[i]).toBeLessThanOrEqual(present[i - 1]);
        else expect(present[i]).toBeGreaterThanOrEqual(present[i - 1]);
      }
      expect([...ids].sort()).toEqual(api.features.filter((f) => f.properties.role !== 'rural').map((f) => f.id).sort());
    };
    await page.click('#table button.sort[data-sort="lst_night"]');
    check(await order(), 'desc');
    expect(await page.locator('#table th[data-key="lst_night"]').getAttribute('aria-sort')).toBe('descending');
    await page.click('#table button.sort[data-sort="lst_night"]');
    check(await order(), 'asc');
    expect(new URL(page.url()).searchParams.get('sort')).toBe('lst_night');
    // by name: alphabetical as the API spells the names
    await page.click('#table button.sort[data-sort="name"]');
    const names = new Map(api.features.map((f) => [f.id, f.properties.name]));
    const byName = (await order()).map((id) => names.get(id)!);
    expect(byName).toEqual([...byName].sort((a, b) => a.localeCompare(b)));
  });

  it('outlines the Gi* hot and cold spots of the API when asked', async () => {
    await page.check('#spots');
    await ready(page);
    const api = await apiJson<{ rows: { district: string; spot: string }[] }>(`/api/hotspots?year=${latest - 1}&metric=lst_day&season=summer`);
    const drawn = await page.$$eval('#map path.hl-spot', (els) => els.map((e) => `${e.getAttribute('data-id')}:${e.getAttribute('data-spot')}`));
    expect(drawn.sort()).toEqual(api.rows.filter((r) => r.spot !== 'none').map((r) => `${r.district}:${r.spot}`).sort());
    // the generated city's day surface has clusters (water and park), so the check compares something
    expect(drawn.length).toBeGreaterThan(0);
  });

  it('offers the table as CSV and the districts as GeoJSON from the API', async () => {
    const csvHref = await page.locator('#dl-csv').getAttribute('href');
    const geoHref = await page.locator('#dl-geojson').getAttribute('href');
    const csv = await fetch(`${origin}${csvHref}`);
    expect(csv.status).toBe(200);
    expect(csv.headers.get('content-type')).toMatch(/text\/csv/);
    const geo = await fetch(`${origin}${geoHref}`);
    expect(((await geo.json()) as { type: string }).type).toBe('FeatureCollection');
  });

  it('at 360 px wide there is no sideways scroll of the page', async () => {
    const phone = await openPage(`/?metric=suhi_night&year=${latest}&district=${WARMING}`, 360, 800);
    const widths = await phone.evaluate(() => ({ scroll: document.documentElement.scrollWidth, client: document.documentElement.clientWidth }));
    expect(widths.scroll).toBeLessThanOrEqual(widths.client);
    // map above the table
    const mapTop = await phone.locator('#map').evaluate((e) => e.getBoundingClientRect().top);
    const tableTop = await phone.locator('#table').evaluate((e) => e.getBoundingClientRect().top);
    expect(mapTop).toBeLessThan(tableTop);
    await phone.screenshot({ path: path.join(ARTEFACTS, 'page-phone.png'), fullPage: true });
    await phone.context().close();
  });

  it('lists the scenes behind a year, saying for each night pass from thermal DN whether the atmosphere was corrected, as the API says', async () => {
    const district = new URL(page.url()).searchParams.get('district')!;
    await page.click(`#panel-body button.scenes[data-year="${latest}"]`);
    const list = page.locator(`tr.scenes-row[data-year="${latest}"] table.scenes`);
    await list.waitFor();
    const shown = await list.locator('tbody tr').evaluateAll((rows) => rows.map((r) => Array.from(r.querySelectorAll('td')).map((c) => ({
      text: (c.textContent ?? '').trim(), marked: c.querySelector('.uncorrected') !== null, title: c.querySelector('[title]')?.getAttribute('title') ?? null,
    }))));
    type Row = { acquired_at: string; pass: string | null; kind: string; atmospheric_correction: boolean | null; how_lst_was_made: string | null; atmospheric_correction_note: string | null; districts: { district: string }[] };
    const api = (await apiJson<{ rows: Row[] }>(`/api/scenes?from=${latest}-01-01&to=${latest}-12-31&limit=5000`)).rows
      .filter((r) => r.pass !== null && r.districts.some((d) => d.district === district));
    expect(shown.map((c) => c[0].text)).toEqual(api.map((r) => r.acquired_at.replace('T', ' ').slice(0, 16)));
    const nights = api.filter((r) => r.kind === 'thermal');
    // the generated archive gives both kinds of night pass in a summer
    expect(nights.map((r) => r.atmospheric_correction)).toContain(true);
    expect(nights.map((r) => r.atmospheric_correction)).toContain(false);
    for (const [i, r] of api.entries()) {
      const made = shown[i][4];
      if (r.kind !== 'thermal') {
        expect(made.text).toBe('supplied as surface temperature');
        continue;
      }
      expect(made.title).toBe(r.how_lst_was_made);
      expect(made.marked).toBe(r.atmospheric_correction === false);
      expect(made.text).toMatch(r.atmospheric_correction ? /^raw thermal readings, corrected for the atmosphere$/ : /^raw thermal readings, not corrected for the atmosphere/);
    }
    const note = await page.locator(`tr.scenes-row[data-year="${latest}"] .uncorrected-note`).innerText();
    const said = nights.find((r) => r.atmospheric_correction === false)!.atmospheric_correction_note!;
    expect(note).toContain(said.slice(1));
    await page.locator(`tr.scenes-row[data-year="${latest}"]`).screenshot({ path: path.join(ARTEFACTS, 'page-scenes.png') });
  });

  it('asked for nothing outside the server and broke no content policy', () => {
    expect(requested.length).toBeGreaterThan(10);
    expect(requested.filter((u) => !u.startsWith(`${origin}/`))).toEqual([]);
    expect(policyViolations).toEqual([]);
  });
});
