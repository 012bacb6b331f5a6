/// <reference lib="dom" />
/**
 * `heatledger report` on a store from a small generated archive of the
 * invented city (8 summers, 5 day/night pairs each, 500 m pixels), in which
 * Merrowin Vale (D16) warms by a known 0.6 K a year and no other district
 * warms (demo-data/generate.ts adds the slope to every pixel of the district;
 * the rural reference does not warm).
 *
 * Checks: every figure of the summary equals what the API's answer functions
 * return for the same query (the report writes each inside a <data> element
 * holding the value); the HTML loads in headless Chromium without a single
 * request beyond its own file and holds the map, the bar chart and the small
 * multiples as SVG; the PDF printed from it has the expected pages and its
 * text, extracted by pdftotext (Debian poppler-utils), names the hottest
 * district and the software version.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cleanEnv, cliOk, ensurePipelineBuild, killAllChildren, makeArchive, repoRoot, runCli } from '../support/pipeline-harness.js';
import { CHROMIUM_PATH, toolAvailable } from '../support/services.js';
import { openStore, type Store } from '../../workers/store/index.js';
import { writeWaterGeoJson } from '../../demo-data/city.js';
import { answerDistricts, answerRankings, answerTrends, type DistrictsAnswer, type DistrictsQuery, type RankingsQuery, type TrendQuery } from '../../api/answers/index.js';
import { printPdf } from '../../api/report/pdf.js';
import { PRECISION, roundNumber } from '../../workers/format.js';

await ensurePipelineBuild();
const tools = (['chromium', 'pdftotext', 'pdfinfo'] as const).every((t) => toolAvailable(t, 'report.test.ts (HTML in Chromium, PDF pages and text)'));

const VERSION = JSON.parse(readFileSync(path.join(repoRoot, 'package.json'), 'utf8')).version as string;
const YEAR = 2026;
const tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-report-'));
const dataDir = path.join(tmp, 'store');
const htmlPath = path.join(tmp, 'out', 'report.html');
const pdfPath = path.join(tmp, 'out', 'report.pdf');
const waterPath = path.join(tmp, 'server side', 'sea and river.geojson');
let html = '';

beforeAll(async () => {
  const archive = await makeArchive(path.join(tmp, 'archive'), { years: 8, pairsPerYear: 5, pixelSizeMetres: 500, trendsKelvinPerYear: { D16: 0.6 } });
  // the water polygons in a folder of this machine that the report must not name
  await writeWaterGeoJson(waterPath, 12000);
  await cliOk(['ingest', path.join(tmp, 'archive'), '--districts', archive.districtsPath, '--water', waterPath, '--data-dir', dataDir, '--no-progress', '--threads', '1'], cleanEnv(), 240_000);
  const args = ['report', '--year', String(YEAR), '--baseline', '2019-2020', '--place', 'Corvenmouth', '--out', htmlPath, '--data-dir', dataDir];
  await cliOk(tools ? [...args, '--pdf', pdfPath] : args, cleanEnv({ HEATLEDGER_CHROMIUM: CHROMIUM_PATH }), 240_000);
  html = readFileSync(htmlPath, 'utf8');
}, 600_000);

afterAll(async () => {
  await killAllChildren();
  rmSync(tmp, { recursive: true, force: true });
});

/** The API's answer functions (the ones its routes call), each on one page (limit 5000 > 17 districts). */
function answersOf(store: Store) {
  return {
    districts: (q: DistrictsQuery) => answerDistricts(store, { ...q, limit: 5000 }),
    rankings: (q: RankingsQuery) => answerRankings(store, { order: 'desc', ...q, limit: 5000 }),
    trends: (q: TrendQuery) => answerTrends(store, { ...q, limit: 5000 }),
  };
}

async function withAnswers<T>(fn: (a: ReturnType<typeof answersOf>) => Promise<T>): Promise<T> {
  const store = await openStore({ dataDir, readOnly: true });
  try {
    return await fn(answersOf(store));
  } finally {
    await store.close();
  }
}

/** Area-weighted mean of the districts' value (the report's stated definition of the city figure). */
function weighted(a: DistrictsAnswer, field: 'suhi_night_k' | 'suhi_day_k'): number {
  const ds = a.features.filter((f) => f.properties.role === 'district' && f.properties[field] !== null);
  return ds.reduce((s, f) => s + (f.properties[field] as number) * f.properties.area_m2, 0) / ds.reduce((s, f) => s + f.properties.area_m2, 0);
}

/** The <data> figures of one section: name → { value, shown text }. */
function figuresOf(section: string): Map<string, { value: number; raw: string; shown: string }> {
  const out = new Map<string, { value: number; raw: string; shown: string }>();
  for (const m of section.matchAll(/<data data-figure="([^"]+)" value="([^"]*)">([^<]*)<\/data>/g)) out.set(m[1], { value: Number(m[2]), raw: m[2], shown: m[3] });
  return out;
}

function sectionOf(id: string): string {
  const m = new RegExp(`<section id="${id}"[^>]*>([\\s\\S]*?)</section>`).exec(html);
  if (!m) throw new Error(`no section ${id} in the report`);
  return m[1];
}

describe('report: summary figures equal the API answers', () => {
  it('every <data> figure of the summary has the value the API returns for the same query', async () => {
    const expected = await withAnswers(async (a) => {
      const season = 'summer' as const;
      const now = await a.districts({ year: YEAR, season, metric: 'suhi_night' });
      const prev = await a.districts({ year: YEAR - 1, season, metric: 'suhi_night' });
      const base = [await a.districts({ year: 2019, season, metric: 'suhi_night' }), await a.districts({ year: 2020, season, metric: 'suhi_night' })];
      const night = await a.rankings({ year: YEAR, metric: 'suhi_night', season });
      const day = await a.rankings({ year: YEAR, metric: 'suhi_day', season });
      const tn = await a.trends({ metric: 'suhi_night', season, to: YEAR, alpha: 0.05 });
      const td = await a.trends({ metric: 'suhi_day', season, to: YEAR, alpha: 0.05 });
      const e = new Map<string, number>();
      const cityN = weighted(now, 'suhi_night_k');
      const cityD = weighted(now, 'suhi_day_k');
      const baseN = (weighted(base[0], 'suhi_night_k') + weighted(base[1], 'suhi_night_k')) / 2;
      const baseD = (weighted(base[0], 'suhi_day_k') + weighted(base[1], 'suhi_day_k')) / 2;
      e.set('city_suhi_night_k', cityN).set('city_suhi_day_k', cityD);
      e.set('baseline_suhi_night_k', baseN).set('baseline_suhi_day_k', baseD);
      e.set('night_vs_baseline_k', cityN - baseN).set('day_vs_baseline_k', cityD - baseD);
      e.set('night_since_last_year_k', cityN - weighted(prev, 'suhi_night_k')).set('day_since_last_year_k', cityD - weighted(prev, 'suhi_day_k'));
      night.rows.slice(0, 3).forEach((r) => e.set(`top_night_${r.district}`, r.value as number));
      day.rows.slice(0, 3).forEach((r) => e.set(`top_day_${r.district}`, r.value as number));
      e.set('districts_tested_night', tn.districts_tested);
      const up = tn.rows.filter((r) => r.direction === 'increasing');
      e.set('warming_night_count', up.length);
      for (const r of up) e.set(`warming_night_per_decade_${r.district}`, r.slope_per_decade as number);
      for (const r of tn.rows.filter((x) => x.direction === 'decreasing')) e.set(`cooling_night_per_decade_${r.district}`, r.slope_per_decade as number);
      const upDay = td.rows.filter((r) => r.direction === 'increasing');
      e.set('warming_day_count', upDay.length);
      for (const r of upDay) e.set(`warming_day_per_decade_${r.district}`, r.slope_per_decade as number);
      const rise = night.rows.filter((r) => (r.rank_change ?? 0) > 0).sort((x, y) => (y.rank_change as number) - (x.rank_change as number))[0];
      if (rise) e.set('largest_rise_places', rise.rank_change as number).set('largest_rise_rank', rise.rank);
      for (const r of night.rows.slice(0, 3)) if (r.previous_rank !== null) e.set(`previous_rank_${r.district}`, r.previous_rank);
      e.set('districts_with_values_night', now.features.filter((f) => f.properties.role === 'district' && f.properties.suhi_night_k !== null).length);
      return { e, upNames: up.map((r) => r.name), hottestNight: night.rows[0].name, topNightKeys: night.rows.slice(0, 3).map((r) => `top_night_${r.district}`) };
    });
    const summary = sectionOf('summary');
    const figures = figuresOf(summary);
    // the essential figures are there
    for (const k of ['city_suhi_night_k', 'city_suhi_day_k', 'baseline_suhi_night_k', 'night_vs_baseline_k', 'night_since_last_year_k', 'districts_tested_night']) {
      expect(figures.has(k), k).toBe(true);
    }
    expect([...figures.keys()].filter((k) => k.startsWith('top_night_'))).toEqual(expected.topNightKeys);
    expect([...figures.keys()].filter((k) => k.startsWith('top_day_'))).toHaveLength(3);
    for (const [name, f] of figures) {
      expect(expected.e.has(name), `figure ${name} is one the API gives`).toBe(true);
      // rounded as the API rounds (workers/format.ts: 0.0001 K), so no float noise reaches the value attribute
      expect(f.value, name).toBe(roundNumber(expected.e.get(name) as number, PRECISION.kelvin));
      expect(f.raw, name).toMatch(/^-?[0-9]+(\.[0-9]{1,4})?$/);
      // the shown text says the same number, to the digits shown (a count, or 1-2 decimals); a rank may be a word
      const m = /([−+-]?)([0-9]+(?:\.([0-9]+))?)/.exec(f.shown);
      if (m === null) continue;
      const halfStep = 0.5 * 10 ** -(m[3]?.length ?? 0) + 1e-9;
      expect(Math.abs(Number(m[2]) - Math.abs(f.value)), `${name}: "${f.shown}" vs ${f.value}`).toBeLessThanOrEqual(halfStep);
      if (m[1] !== '') expect(m[1] === '+' ? 1 : -1, `${name}: sign of "${f.shown}"`).toBe(Math.sign(f.value));
    }
    // every number in the summary sentences is a figure (or a year, or the stated 5 % error rate)
    const text = summary.replace(/<data[^>]*>[^<]*<\/data>/g, ' ').replace(/<[^>]+>/g, ' ');
    const loose = [...text.matchAll(/[0-9]+(?:\.[0-9]+)?/g)].map((m) => m[0]).filter((n) => !(/^20[0-9]{2}$/.test(n)) && n !== '5');
    expect(loose).toEqual([]);
    // the built-in warming is found and named (true slope 0.6 K/yr in D16, demo-data/generate.ts)
    expect(expected.upNames).toContain('Merrowin Vale');
    expect(summary).toContain('Merrowin Vale (<data data-figure="warming_night_per_decade_D16"');
    expect(summary).toContain(expected.hottestNight);
  });
});

describe.skipIf(!tools)('report in Chromium and as PDF', () => {
  it('the HTML makes no request beyond its own file (and the listener does see one a page makes)', async () => {
    const { chromium } = await import('playwright-core');
    const { CHROMIUM_ARGS } = await import('../../api/report/pdf.js');
    const browser = await chromium.launch({ executablePath: CHROMIUM_PATH, args: [...CHROMIUM_ARGS] });
    try {
      const requestsOf = async (file: string): Promise<{ urls: string[]; scripts: number; svgs: Record<string, number> }> => {
        const page = await browser.newPage();
        const urls: string[] = [];
        page.on('request', (r) => urls.push(r.url()));
        await page.route((u) => !u.protocol.startsWith('file'), (route) => route.abort());
        await page.goto(pathToFileURL(file).href, { waitUntil: 'load' });
        const scripts = await page.evaluate(() => document.scripts.length);
        const svgs = await page.evaluate(() => ({
          map: document.querySelectorAll('#where figure.map .map-drawing svg').length,
          mapShapes: document.querySelectorAll('#where figure.map .map-drawing svg path').length,
          bars: document.querySelectorAll('#where figure.bars svg').length,
          multiples: document.querySelectorAll('#trend .multiples svg').length,
        }));
        await page.close();
        return { urls, scripts, svgs };
      };
      const own = await requestsOf(htmlPath);
      expect(own.urls).toEqual([pathToFileURL(htmlPath).href]);
      expect(own.scripts).toBe(0);
      expect(own.svgs.map).toBe(1);
      expect(own.svgs.mapShapes).toBeGreaterThanOrEqual(17); // one outline per district of the invented city (17)
      expect(own.svgs.bars).toBe(1);
      expect(own.svgs.multiples).toBe(6);
      // control: the same page with one outside image is caught
      const control = path.join(tmp, 'out', 'control.html');
      writeFileSync(control, html.replace('</body>', '<img src="http://192.0.2.1/pixel.png" alt=""></body>'));
      expect((await requestsOf(control)).urls).toContain('http://192.0.2.1/pixel.png');
    } finally {
      await browser.close();
    }
  }, 120_000);

  it('the map printed to PDF gives each label\'s words once to text extraction (pdftotext), halo and all', async () => {
    const svg = /<div class="map-drawing">(<svg[\s\S]*?<\/svg>)<\/div>/.exec(html)?.[1];
    expect(svg).toBeDefined();
    // the words the map writes: each label's lines (its text and tspans; the <title> is not drawn)
    const labelWords = [...svg!.matchAll(/<text class="hl-label[^"]*"[^>]*>([\s\S]*?)<\/text>/g)]
      .flatMap((m) => m[1].replace(/<title>[\s\S]*?<\/title>/g, '').replace(/<[^>]+>/g, ' ').split(/\s+/))
      .filter(Boolean).map((w) => w.replace(/&#39;/g, "'").replace(/&#38;/g, '&'));
    expect(labelWords.length).toBeGreaterThanOrEqual(17);
    const mapPdf = path.join(tmp, 'out', 'map-only.pdf');
    await printPdf(`<!doctype html><html><body>${svg}</body></html>`, mapPdf, { executablePath: CHROMIUM_PATH });
    const extracted = execFileSync('pdftotext', [mapPdf, '-'], { encoding: 'utf8' })
      .split('\n').filter((l) => !/^page [0-9]+ of [0-9]+$/.test(l.trim())).join(' ').split(/\s+/).filter(Boolean);
    expect([...extracted].sort()).toEqual([...labelWords].sort());
  }, 120_000);

  it('the PDF has the report\'s pages and its text names the hottest district and the version', async () => {
    const hottest = await withAnswers(async (a) => (await a.rankings({ year: YEAR, metric: 'suhi_night', season: 'summer' })).rows[0].name);
    const info = execFileSync('pdfinfo', [pdfPath], { encoding: 'utf8' });
    const pages = Number(/^Pages:\s+([0-9]+)/m.exec(info)![1]);
    // title and summary, the year's map and table, trends, data quality, methods, appendix: each starts a page
    expect(pages).toBeGreaterThanOrEqual(6);
    const text = execFileSync('pdftotext', ['-layout', pdfPath, '-'], { encoding: 'utf8' });
    expect(text).toContain(hottest);
    expect(text).toContain(`heatledger ${VERSION}`);
    expect(text).toContain(`page ${pages} of ${pages}`);
  }, 120_000);

  it('names no folder of this machine, says the run settings in words, and keeps them on the methods page (project rule, no source)', () => {
    for (const doc of [html, execFileSync('pdftotext', ['-layout', pdfPath, '-'], { encoding: 'utf8' })]) {
      expect(doc).not.toContain(tmp);
      expect(doc).not.toContain('server side');
    }
    const appendix = html.slice(html.indexOf('<section id="appendix"'));
    expect(appendix).toContain('with the water of sea and river.geojson cut out');
    expect(appendix).toContain('At least 50 % of the district');
    expect(appendix).not.toMatch(/minValidFraction|pairingWindowHours|ruralReference|<code>/);
    // pdftotext ends each page with a form feed: the settings share the appendix's first page with the first scenes
    const pageTexts = execFileSync('pdftotext', ['-layout', pdfPath, '-'], { encoding: 'utf8' }).split('\f');
    const first = pageTexts.find((t) => t.includes('Appendix: settings and input scenes'))!;
    for (const words of ['Software', 'How the data were processed', 'ATI computed', 'Input scenes']) expect(first).toContain(words);
    expect(first).toMatch(/\.tif /);
  });
});

describe('report: units', () => {
  it('surface temperatures are the API\'s kelvin, or kelvin − 273.15 in °C (BIPM, SI Brochure, 9th ed. 2019, §2.3.1); differences keep their number', async () => {
    const kelvinPath = path.join(tmp, 'out', 'kelvin.html');
    await cliOk(['report', '--year', String(YEAR), '--units', 'K', '--out', kelvinPath, '--data-dir', dataDir], cleanEnv(), 240_000);
    const kelvinHtml = readFileSync(kelvinPath, 'utf8');
    const { top, feature } = await withAnswers(async (a) => {
      const top = (await a.rankings({ year: YEAR, metric: 'suhi_night', season: 'summer' })).rows[0];
      const feature = (await a.districts({ year: YEAR, season: 'summer', metric: 'suhi_night' })).features.find((f) => f.id === top.district)!;
      return { top, feature };
    });
    const cells = (doc: string): string[] => {
      const row = [...doc.matchAll(/<tr><td class="n">[0-9]+<\/td><td>([^<]*)<\/td>(.*?)<\/tr>/g)].find((m) => m[1] === top.name)!;
      return [...row[2].matchAll(/<td class="n">([^<]*)<\/td>/g)].map((m) => m[1]);
    };
    const lstNight = feature.properties.lst_night_k as number;
    const fmt = (v: number, d: number) => v.toFixed(d).replace('-', '\u2212');
    expect(cells(kelvinHtml)[2]).toBe(`${fmt(lstNight, 1)} K`);
    expect(cells(html)[2]).toBe(`${fmt(lstNight - 273.15, 1)} °C`);
    // night SUHI, a difference: the same number in both
    expect(cells(kelvinHtml)[0]).toBe(`+${fmt(feature.properties.suhi_night_k as number, 2)} K`);
    expect(cells(html)[0]).toBe(`+${fmt(feature.properties.suhi_night_k as number, 2)} °C`);
  }, 300_000);
});

describe('report: refusals', () => {
  it('--pdf without Chromium names the Debian package and writes nothing', async () => {
    const out = path.join(tmp, 'none', 'r.html');
    const r = await runCli(['report', '--out', out, '--pdf', path.join(tmp, 'none', 'r.pdf'), '--data-dir', dataDir], cleanEnv({ HEATLEDGER_CHROMIUM: path.join(tmp, 'no-such-chromium') }));
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/Debian package "chromium"/);
    // and the variable that names another browser (workers/config.ts)
    expect(r.stderr).toContain('HEATLEDGER_CHROMIUM');
    expect(existsSync(out)).toBe(false);
  });

  it('a year without values and a malformed baseline are refused by name', async () => {
    const noYear = await runCli(['report', '--year', '2031', '--out', path.join(tmp, 'x.html'), '--data-dir', dataDir], cleanEnv());
    expect(noYear.code).toBe(2);
    expect(noYear.stderr).toMatch(/^heatledger: no district values for 2031; the store has \d{4}/);
    const bad = await runCli(['report', '--baseline', '2021-2019', '--out', path.join(tmp, 'x.html'), '--data-dir', dataDir], cleanEnv());
    expect(bad.code).toBe(2);
    expect(bad.stderr).toContain('--baseline');
  });
});
