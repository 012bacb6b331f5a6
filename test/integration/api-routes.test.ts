/**
 * The read routes on the embedded store, every number checked against an
 * outside reference computed from the seeded inputs in one Python process:
 * - NumPy (Debian python3-numpy): yearly and seasonal means (numpy.mean), medians (numpy.median);
 * - SciPy (Debian python3-scipy): kendalltau (tau-b), theilslopes (Sen slope, its 95 % interval
 *   and intercept median(y) - slope * median(x)), norm.sf, rankdata(method='min') (competition
 *   ranks);
 * - Benjamini–Hochberg q written in NumPy from the step-up formula (Benjamini & Hochberg 1995);
 * - Mann–Kendall S, Var(S) = n(n-1)(2n+5)/18 (no ties) and the continuity-corrected z, written
 *   in NumPy from the formulas (Gilbert 1987, ch. 16, equations from memory);
 * - Moran's I with row-standardised queen weights, written in NumPy from its formula
 *   (Moran 1950; Cliff & Ord 1981, from memory), the grid's neighbours listed by hand.
 * - GDAL's GeoJSON driver (OGR, Debian python3-gdal) and shapely (python3-shapely) read the
 *   district map back: RFC 7946 as GDAL understands it, OGC-valid polygons.
 * Invented data (test/support/api-store.ts) are inputs only.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../api/app.js';
import { answerDistricts, answerTrends } from '../../api/answers/index.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { finishRun, registerScene, replaceDerived, startRun } from '../../workers/store/index.js';
import { sceneProgress } from '../../workers/store/scene-listing.js';
import { FIRST_YEAR, GRID_IDS, LAST_YEAR, seedApiStore, type ApiStore } from '../support/api-store.js';
import { pythonModulesAvailable } from '../support/services.js';

const PYTHON = '/usr/bin/python3';
// one mechanism for reference tools (test/support/services.ts): skipped with a SKIPPED line, or a failure under HEATLEDGER_REQUIRE_SERVICES=1
const HAVE_SCIPY = await pythonModulesAvailable(['scipy.stats', 'numpy'], 'api-routes reference checks');
const HAVE_GDAL = HAVE_SCIPY && await pythonModulesAvailable(['osgeo.ogr', 'shapely'], 'api-routes GeoJSON read-back');

const REFERENCE = String.raw`
import json, sys
import numpy as np
from scipy import stats
req = json.load(sys.stdin)
rows = req["rows"]; ids = req["ids"]; metrics = ["lst_day_k", "lst_night_k", "suhi_day_k", "suhi_night_k", "ati_per_k"]
seasons = {"all": None, "summer": [6, 7, 8]}
out = {"means": {}, "trends": {}, "ranks": {}, "moran": {}}
for sname, months in seasons.items():
    means = {}
    for d in ids:
        for y in sorted({int(r["date"][:4]) for r in rows}):
            sel = [r for r in rows if r["district"] == d and int(r["date"][:4]) == y and (months is None or int(r["date"][5:7]) in months)]
            if sel:
                means.setdefault(d, {})[str(y)] = {m: float(np.mean([r[m] for r in sel])) for m in metrics} | {"dates": len(sel), "dates_list": sorted(r["date"] for r in sel)}
    out["means"][sname] = means
    # trend of suhi_night per district over the yearly means
    tr = {}
    for d in ids:
        ys = sorted(int(y) for y in means[d]); t = np.array(ys, float); x = np.array([means[d][str(y)]["suhi_night_k"] for y in ys])
        n = len(x)
        s = sum(np.sign(x[j] - x[i]) for i in range(n - 1) for j in range(i + 1, n))
        var = n * (n - 1) * (2 * n + 5) / 18.0
        z = (s - np.sign(s)) / np.sqrt(var)
        th = stats.theilslopes(x, t, alpha=0.95)
        tr[d] = {"s": float(s), "z": float(z), "p": float(2 * stats.norm.sf(abs(z))), "tau": float(stats.kendalltau(t, x)[0]),
                 "slope": float(th[0]), "lo": float(th[2]), "hi": float(th[3]), "intercept": float(th[1]),
                 "pivot_year": float(np.median(t)), "pivot_value": float(np.median(x))}
    # Benjamini & Hochberg (1995) step-up q: q_(i) = min over j >= i of m p_(j) / j
    ps = np.array([tr[d]["p"] for d in ids]); order = np.argsort(ps); m = len(ps)
    stepped = np.minimum.accumulate((m * ps[order] / np.arange(1, m + 1))[::-1])[::-1]
    qs = np.empty(m); qs[order] = np.minimum(stepped, 1)
    for d, q in zip(ids, qs): tr[d]["q"] = float(q)
    out["trends"][sname] = tr
    # ranks of every year (desc: rank 1 = highest)
    rk = {}
    for y in sorted({int(r["date"][:4]) for r in rows}):
        v = np.array([means[d][str(y)]["suhi_night_k"] for d in ids])
        rk[str(y)] = {d: int(r) for d, r in zip(ids, stats.rankdata(-v, method="min"))}
    out["ranks"][sname] = rk
# Moran's I, row-standardised queen weights on the 3 x 3 grid (neighbours: cells whose row and column differ by at most 1)
pos = {d: (i % 3, i // 3) for i, d in enumerate(ids)}
W = np.array([[1.0 if a != b and abs(pos[a][0] - pos[b][0]) <= 1 and abs(pos[a][1] - pos[b][1]) <= 1 else 0.0 for b in ids] for a in ids])
W = W / W.sum(axis=1, keepdims=True)
y = str(req["last_year"])
x = np.array([out["means"]["all"][d][y]["suhi_night_k"] for d in ids]); zc = x - x.mean(); n = len(x)
out["moran"] = {"i": float(n / W.sum() * (zc @ W @ zc) / (zc @ zc)), "expected": -1.0 / (n - 1)}
json.dump(out, sys.stdout)
`;

interface Ref {
  means: Record<string, Record<string, Record<string, Record<string, number> & { dates: number; dates_list: string[] }>>>;
  trends: Record<string, Record<string, Record<string, number>>>;
  ranks: Record<string, Record<string, Record<string, number>>>;
  moran: { i: number; expected: number };
}

let tmp: string;
let store: Store;
let app: FastifyInstance;
let seeded: ApiStore;
let ref: Ref;

const get = async (url: string, headers: Record<string, string> = {}) => app.inject({ method: 'GET', url, headers });

beforeAll(async () => {
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-api-routes-'));
  store = await openStore({ memory: true });
  seeded = await seedApiStore(store, path.join(tmp, 'archive'));
  app = buildApp(store, { logLevel: 'silent', dataRoot: tmp });
  if (HAVE_SCIPY) {
    const r = spawnSync(PYTHON, ['-c', REFERENCE], { input: JSON.stringify({ rows: seeded.derived, ids: GRID_IDS, last_year: LAST_YEAR }), encoding: 'utf8', maxBuffer: 64 << 20 });
    if (r.status !== 0) throw new Error(`reference script failed: ${r.stderr}`);
    ref = JSON.parse(r.stdout) as Ref;
  }
});
afterAll(async () => {
  await app?.close();
  await store?.close();
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

describe.skipIf(!HAVE_SCIPY)('read routes against NumPy / SciPy', () => {
  it('GET /api/districts: a GeoJSON FeatureCollection of lon/lat polygons with the season-year means (numpy.mean)', async () => {
    for (const season of ['all', 'summer']) {
      const r = await get(`/api/districts?year=2019&season=${season}&metric=suhi_day`);
      expect(r.statusCode).toBe(200);
      expect(r.headers['content-type']).toMatch(/^application\/geo\+json/);
      const body = r.json();
      // RFC 7946 §3.3: a FeatureCollection has "features", each a Feature with geometry and properties
      expect(body.type).toBe('FeatureCollection');
      expect(body).toMatchObject({ year: 2019, season, metric: 'suhi_day', next_cursor: null, units: { suhi_day_k: 'K', ati_per_k: '1/K' } });
      expect(body.years).toEqual(Array.from({ length: LAST_YEAR - FIRST_YEAR + 1 }, (_, i) => FIRST_YEAR + i));
      expect(body.caution).toMatch(/not air temperature/);
      expect(body.features.map((f: { id: string }) => f.id)).toEqual([...GRID_IDS, 'rural']);
      for (const f of body.features) {
        expect(f.type).toBe('Feature');
        // RFC 7946 §3.1.1: positions are [longitude, latitude]
        for (const ring of f.geometry.coordinates.flat()) for (const [lon, lat] of ring) { expect(Math.abs(lon)).toBeLessThanOrEqual(180); expect(Math.abs(lat)).toBeLessThanOrEqual(90); }
        if (f.id === 'rural') { expect(f.properties.role).toBe('rural'); expect(f.properties.lst_day_k).toBeNull(); continue; }
        const m = ref.means[season][f.id]['2019'];
        for (const k of ['lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k']) expect(f.properties[k], `${season} ${f.id} ${k}`).toBeCloseTo(m[k], 4);
        expect(f.properties.ati_per_k / m.ati_per_k).toBeCloseTo(1, 5);
        expect(f.properties.dates_day).toBe(m.dates);
        expect(f.properties.value).toBe(f.properties.suhi_day_k);
      }
    }
  });
  it.skipIf(!HAVE_GDAL)('GET /api/districts reads back through GDAL\'s GeoJSON driver (OGR) with valid polygons (shapely) and the same properties', async () => {
    const body = (await get('/api/districts?year=2019&metric=suhi_night')).body;
    // GDAL 3 reads GeoJSON (RFC 7946) as WGS 84 lon/lat; shapely checks OGC validity (is_valid) and areas
    const code = [
      'import json, sys',
      'from osgeo import ogr',
      'from shapely.geometry import shape',
      'ds = ogr.Open(sys.argv[1]); layer = ds.GetLayer(0)',
      'srs = layer.GetSpatialRef()',
      'out = {"driver": ds.GetDriver().GetName(), "count": layer.GetFeatureCount(), "epsg": srs.GetAuthorityCode(None) if srs else None, "features": {}}',
      'for f in layer:',
      '    g = shape(json.loads(f.GetGeometryRef().ExportToJson()))',
      '    out["features"][f.GetField("id")] = {"valid": g.is_valid, "area": g.area, "suhi_night_k": f.GetField("suhi_night_k"), "value": f.GetField("value"), "role": f.GetField("role")}',
      'print(json.dumps(out))',
    ].join('\n');
    const file = path.join(tmp, 'districts.geojson');
    writeFileSync(file, body);
    const r = spawnSync(PYTHON, ['-c', code, file], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const ogr = JSON.parse(r.stdout) as { driver: string; count: number; epsg: string | null; features: Record<string, { valid: boolean; area: number; suhi_night_k: number | null; value: number | null; role: string }> };
    expect(ogr.driver).toBe('GeoJSON');
    expect(ogr.count).toBe(GRID_IDS.length + 1);
    expect(ogr.epsg).toBe('4326');
    for (const id of GRID_IDS) {
      const f = ogr.features[id];
      expect(f.valid, id).toBe(true);
      // each grid cell is 0.01° × 0.01° (test/support/api-store.ts): 1e-4 square degrees
      expect(f.area).toBeCloseTo(1e-4, 10);
      expect(f.suhi_night_k).toBeCloseTo(ref.means.all[id]['2019'].suhi_night_k, 4);
      expect(f.value).toBe(f.suhi_night_k);
    }
    expect(ogr.features.rural.role).toBe('rural');
  });
  it('GET /api/districts defaults to the latest year; CSV by format=csv or Accept: text/csv, without geometry', async () => {
    expect((await get('/api/districts')).json().year).toBe(LAST_YEAR);
    for (const r of [await get('/api/districts?format=csv&year=2016'), await get('/api/districts?year=2016', { accept: 'text/csv' })]) {
      expect(r.headers['content-type']).toMatch(/^text\/csv/);
      const lines = r.body.trim().split('\n');
      expect(lines[0]).toBe('id,name,role,area_m2,lst_day_k,lst_night_k,suhi_day_k,suhi_night_k,ati_per_k,dates_day,dates_night,value');
      const b2 = lines.find((l) => l.startsWith('b2,'))!.split(',');
      expect(Number(b2[6])).toBeCloseTo(ref.means.all.b2['2016'].suhi_day_k, 4);
      expect(Number(b2[11])).toBeCloseTo(ref.means.all.b2['2016'].suhi_night_k, 4);
    }
  });
  it('GET /api/trends: Mann–Kendall, Sen slope, interval, pivot and Benjamini–Hochberg q of every district', async () => {
    for (const season of ['all', 'summer']) {
      const body = (await get(`/api/trends?metric=suhi_night&season=${season}`)).json();
      expect(body).toMatchObject({ metric: 'suhi_night', season, alpha: 0.05, serial_correction: 'none', unit: 'K', districts_tested: 9, next_cursor: null });
      expect(body.rows.map((r: { district: string }) => r.district)).toEqual(GRID_IDS);
      for (const row of body.rows) {
        const t = ref.trends[season][row.district];
        expect(row.n).toBe(LAST_YEAR - FIRST_YEAR + 1);
        expect(row.s).toBe(t.s);
        expect(row.z).toBeCloseTo(t.z, 4);
        expect(row.p / t.p).toBeCloseTo(1, 5);
        expect(row.q / t.q).toBeCloseTo(1, 5);
        expect(row.tau).toBeCloseTo(t.tau, 4);
        expect(row.slope_per_year).toBeCloseTo(t.slope, 4);
        expect(row.slope_per_decade).toBeCloseTo(t.slope * 10, 3);
        expect(row.slope_ci_lower).toBeCloseTo(t.lo, 4);
        expect(row.slope_ci_upper).toBeCloseTo(t.hi, 4);
        expect(row.slope_ci_lower_per_decade).toBeCloseTo(t.lo * 10, 3);
        expect(row.pivot_year).toBe(t.pivot_year);
        expect(row.pivot_value).toBeCloseTo(t.pivot_value, 4);
        // the line through the pivot meets SciPy's intercept at year 0
        expect(row.pivot_value - row.slope_per_year * row.pivot_year).toBeCloseTo(t.intercept, 0);
        const expected = t.q <= 0.05 ? (t.s > 0 ? 'increasing' : 'decreasing') : 'none';
        expect(row.direction, row.district).toBe(expected);
      }
    }
  });
  it('GET /api/districts/{id}/series: the yearly points (numpy.mean, the dates behind them) and that district\'s trend row', async () => {
    const r = await get('/api/districts/c2/series?metric=suhi_night&season=summer&dates=true');
    expect(r.statusCode).toBe(200);
    const body = r.json();
    expect(body.district).toEqual({ id: 'c2', name: 'Ward C2' });
    expect(body.unit).toBe('K');
    expect(body.points.map((p: { year: number }) => p.year)).toEqual(Object.keys(ref.means.summer.c2).map(Number));
    for (const p of body.points) {
      const m = ref.means.summer.c2[String(p.year)];
      expect(p.value).toBeCloseTo(m.suhi_night_k, 4);
      expect(p.dates).toBe(3);
      expect(p.dates_list).toEqual(m.dates_list);
      expect(p.in_trend).toBe(true);
    }
    const row = (await get('/api/trends?metric=suhi_night&season=summer')).json().rows.find((x: { district: string }) => x.district === 'c2');
    const { district: _d, name: _n, ...fields } = row;
    expect(body.trend).toEqual(fields);
    // from/to narrow the points and the trend alike
    const narrow = (await get('/api/districts/c2/series?metric=suhi_night&from=2017&to=2020')).json();
    expect(narrow.points.map((p: { year: number }) => p.year)).toEqual([2017, 2018, 2019, 2020]);
    expect(narrow.trend.n).toBe(4);
    expect(narrow.points[0].dates_list).toBeUndefined();
  });
  it('GET /api/rankings: competition ranks (scipy rankdata method="min") and the change against the previous year', async () => {
    const body = (await get('/api/rankings?year=2020&metric=suhi_night&season=all')).json();
    expect(body).toMatchObject({ year: 2020, previous_year: 2019, order: 'desc', unit: 'K', next_cursor: null });
    expect(body.rows).toHaveLength(9);
    for (const row of body.rows) {
      expect(row.rank, row.district).toBe(ref.ranks.all['2020'][row.district]);
      expect(row.previous_rank).toBe(ref.ranks.all['2019'][row.district]);
      expect(row.rank_change).toBe(row.previous_rank - row.rank);
      expect(row.value).toBeCloseTo(ref.means.all[row.district]['2020'].suhi_night_k, 4);
    }
    expect(body.rows.map((r: { rank: number }) => r.rank)).toEqual([...body.rows.map((r: { rank: number }) => r.rank)].sort((a, b) => a - b));
    const asc = (await get('/api/rankings?year=2020&metric=suhi_night&order=asc')).json();
    expect(asc.rows[0].district).toBe(body.rows[8].district);
    const first = (await get(`/api/rankings?year=${FIRST_YEAR}&metric=suhi_night`)).json();
    expect(first.previous_year).toBeNull();
    expect(first.rows.every((r: { rank_change: null }) => r.rank_change === null)).toBe(true);
  });
  it('GET /api/hotspots: Moran\'s I of the year (NumPy, row-standardised queen weights) and a Gi* row per district', async () => {
    const body = (await get(`/api/hotspots?year=${LAST_YEAR}&metric=suhi_night`)).json();
    expect(body).toMatchObject({ year: LAST_YEAR, weights: 'queen', fdr: false, left_out: [] });
    expect(body.moran.i).toBeCloseTo(ref.moran.i, 5);
    expect(body.moran.expected).toBeCloseTo(ref.moran.expected, 5);
    expect(body.rows.map((r: { district: string }) => r.district)).toEqual(GRID_IDS);
    // b2 neighbours every other cell: with itself its neighbourhood is the whole map, where Gi* is
    // undefined (the variance term n·Σw² − (Σw)² is 0; Ord & Getis 1995, equation from memory)
    expect(body.rows.find((r: { district: string }) => r.district === 'b2')).toMatchObject({ gi_z: null, gi_p: null, spot: 'none' });
    for (const r of body.rows) {
      expect(r.value).toBeCloseTo(ref.means.all[r.district][String(LAST_YEAR)].suhi_night_k, 4);
      // classification bands (common practice, no source): |z| with p <= 0.01 / 0.05 / 0.1
      const expected = r.gi_p !== null && r.gi_p <= 0.1 ? (r.gi_z > 0 ? 'hot' : 'cold') : 'none';
      expect(r.spot, JSON.stringify(r)).toBe(expected);
    }
  });
});

describe('paging, scenes and parameters', () => {
  it('follows next_cursor through every list to the same rows as one page', async () => {
    for (const url of ['/api/districts?year=2020', '/api/trends?metric=lst_day', '/api/rankings?year=2020&metric=ati', '/api/scenes?']) {
      const whole = (await get(`${url}&limit=5000`)).json();
      const key = url.startsWith('/api/districts') ? 'features' : 'rows';
      const seen: unknown[] = [];
      let cursor: string | null = null;
      let pages = 0;
      do {
        const page = (await get(`${url}&limit=4${cursor ? `&cursor=${cursor}` : ''}`)).json();
        expect(page[key].length, url).toBeLessThanOrEqual(4);
        seen.push(...page[key]);
        cursor = page.next_cursor;
        pages++;
      } while (cursor !== null && pages < 1000);
      expect(seen, url).toEqual(whole[key]);
      expect(pages, url).toBe(Math.max(1, Math.ceil(whole[key].length / 4)));
    }
  });
  it('lists scenes in acquisition order with UTC times, relative files, reasons and per-district valid fractions', async () => {
    const body = (await get('/api/scenes?limit=5000')).json();
    const expected = [...seeded.scenes].sort((a, b) => (a.acquiredAt ?? '9999').localeCompare(b.acquiredAt ?? '9999') || a.id - b.id);
    expect(body.rows.map((r: { id: number }) => r.id)).toEqual(expected.map((s) => s.id));
    for (const r of body.rows) {
      expect(r.file.startsWith('/')).toBe(false);
      expect(JSON.stringify(r)).not.toContain(tmp);
    }
    const failed = body.rows.find((r: { state: string }) => r.state === 'failed');
    expect(failed).toMatchObject({ file: 'archive/broken/unreadable.tif', acquired_at: null, pass: null, reason: 'archive/broken/unreadable.tif: not a TIFF file (no byte-order mark)' });
    const one = (await get(`/api/scenes/${seeded.emptyScene.id}`)).json();
    expect(one.warnings).toEqual([`archive/${LAST_YEAR}/night-08-02.tif: GDAL_METADATA could not be parsed`]);
    expect(one.districts.find((d: { district: string }) => d.district === 'a2')).toEqual({ district: 'a2', valid_fraction: 0, missing_reason: 'no valid pixels (nodata 100, masked 0, implausible 0 of 100)' });
    expect(one.districts.find((d: { district: string }) => d.district === 'a1')).toEqual({ district: 'a1', valid_fraction: 0.95, missing_reason: null });
    const nights = (await get('/api/scenes?pass=night&from=2016-01-01&to=2016-12-31')).json().rows;
    expect(nights.map((r: { acquired_at: string }) => r.acquired_at)).toEqual(['2016-01-20T23:10:00.000Z', '2016-07-04T23:10:00.000Z', '2016-07-15T23:10:00.000Z', '2016-07-27T23:10:00.000Z']);
    expect((await get('/api/scenes?state=failed')).json().rows).toHaveLength(1);
    expect((await get('/api/scenes/999999')).statusCode).toBe(404);
  });
  it('refuses a year without values with 404 on every route that takes one, naming the years that have values', async () => {
    const years = Array.from({ length: LAST_YEAR - FIRST_YEAR + 1 }, (_, i) => FIRST_YEAR + i);
    for (const url of ['/api/table?year=2031', '/api/table?level=year&year=2031', '/api/table?year=2031&format=csv', '/api/rankings?year=2031',
      '/api/districts?year=2031', '/api/districts?year=2031&format=csv', '/api/hotspots?year=2031']) {
      const r = await get(url);
      expect(r.statusCode, url).toBe(404);
      expect(r.headers['content-type'], url).toMatch(/^application\/json/);
      expect(r.json(), url).toEqual({ error: `query parameter year: 2031 has no values in the store; years with values: ${years.join(', ')}`, years });
    }
    // the seeded dates are in January and July only: no autumn (September-November in the northern hemisphere) in any year
    const autumn = await get(`/api/rankings?year=${LAST_YEAR}&season=autumn`);
    expect(autumn.statusCode).toBe(404);
    expect(autumn.json()).toEqual({ error: `query parameter year: ${LAST_YEAR} has no values for season autumn in the store; no year has values for season autumn`, years: [] });
    // a year with values still answers, and no year asked means the latest
    expect((await get(`/api/table?level=year&year=${FIRST_YEAR}`)).json().rows).toHaveLength(GRID_IDS.length);
    expect((await get(`/api/rankings?year=${LAST_YEAR}`)).json().previous_year).toBe(LAST_YEAR - 1);
    // the OpenAPI document declares the years of the error body
    const doc = (await get('/api/openapi.json')).json();
    expect(doc.paths['/api/rankings'].get.responses['404'].content['application/json'].schema.properties.years.type).toBe('array');
  });
  it('answers a district by id with its outline, properties and years; an unknown id is a 404', async () => {
    const body = (await get('/api/districts/b3')).json();
    expect(body).toMatchObject({ id: 'b3', name: 'Ward B3', role: 'district', area_m2: 895000, properties: { albedo: 0.15 } });
    expect(body.geometry.type).toBe('MultiPolygon');
    expect(body.years).toHaveLength(LAST_YEAR - FIRST_YEAR + 1);
    expect((await get('/api/districts/zz9')).statusCode).toBe(404);
  });
  it('refuses bad parameters with 400 naming the parameter and what it accepts', async () => {
    const cases: [string, RegExp][] = [
      ['/api/districts?metric=heat', /query parameter metric must be one of lst_day, lst_night, suhi_day, suhi_night, ati/],
      ['/api/districts?season=monsoon', /query parameter season must be one of summer, winter, spring, autumn, all/],
      ['/api/districts?year=1900', /query parameter year must be a year written in decimal digits from 1950 to 2100, got "1900"/],
      ['/api/districts?yaer=2020', /unknown query parameter "yaer"; known: year, season, metric, format, limit, cursor/],
      ['/api/districts?limit=5001', /query parameter limit must be a whole number from 1 to 5000 in decimal digits, got "5001"/],
      ['/api/districts?limit=0', /query parameter limit must be a whole number from 1 to 5000/],
      ['/api/districts?limit=1e3', /query parameter limit must be a whole number from 1 to 5000/],
      ['/api/districts?cursor=abc', /query parameter cursor is not one this server gave/],
      ['/api/trends?alpha=0.7', /query parameter alpha must be a decimal fraction from 0.001 to 0.5/],
      ['/api/trends?alpha=5e-2', /query parameter alpha must be a significance level written as a decimal fraction/],
      ['/api/trends?from=2020&to=2018', /query parameter from \(2020\) is after to \(2018\)/],
      ['/api/trends?serial_correction=yes', /query parameter serial_correction must be one of none, hamed-rao/],
      ['/api/rankings?order=up', /query parameter order must be one of desc, asc/],
      ['/api/hotspots?fdr=1', /query parameter fdr must be one of true, false/],
      ['/api/scenes?from=2020-02-30', /query parameter from must be a day written YYYY-MM-DD \(UTC\), got "2020-02-30"/],
      ['/api/scenes?state=lost', /query parameter state must be one of registered, processed, failed/],
      ['/api/scenes/abc', /path parameter id must be a scene id in decimal digits, got "abc"/],
      ['/api/districts/c2/series?dates=yes', /query parameter dates must be one of true, false/],
      ['/api/health?x=1', /unknown query parameter "x"; known: none/],
    ];
    for (const [url, message] of cases) {
      const r = await get(url);
      expect(r.statusCode, url).toBe(400);
      expect(r.json().error, url).toMatch(message);
    }
  });
});

describe('ingest job progress', () => {
  it('counts the stored scenes among named files and under named folders; LIKE wildcards in a folder name match only themselves', async () => {
    const archive = path.join(tmp, 'archive');
    const in2016 = seeded.scenes.filter((x) => x.path.startsWith(path.join(archive, '2016') + path.sep));
    expect(in2016.length).toBe(8); // four dates a year, a day and a night scene each (test/support/api-store.ts)
    const files = [seeded.scenes[0].path, seeded.failedPath, path.join(archive, 'missing.tif')];
    expect(await sceneProgress(store, files, [path.join(archive, '2016')])).toEqual({ processed: 1 + 8, failed: 1 });
    // "_" and "%" are LIKE wildcards: as folder names they must not match 2016/ or everything
    expect(await sceneProgress(store, [], [path.join(archive, '20_6'), path.join(archive, '%')])).toEqual({ processed: 0, failed: 0 });
    expect(await sceneProgress(store, [], [path.join(archive, '2016') + '/'])).toEqual({ processed: 8, failed: 0 });
  });
});

describe('response tags', () => {
  it('tags each answer with the last run, answers 304 to a matching If-None-Match, and shows a new year once its run ends', async () => {
    const first = await get('/api/districts');
    const tag = String(first.headers.etag);
    expect(tag).toMatch(/^".+"$/);
    const again = await get('/api/districts', { 'if-none-match': tag });
    expect(again.statusCode).toBe(304);
    expect(again.body).toBe('');
    expect((await get('/api/health', { 'if-none-match': `W/${tag}` })).statusCode).toBe(304);
    // a new year arrives with a run: the tag changes and the answers show it
    {
      const runId = await startRun(store, { softwareVersion: 'test', mode: 'embedded', parameters: {} });
      // one more year, written into the served store by the run
      const day = await registerScene(store, { kind: 'lst', epsg: 32625, crsDefinition: null, width: 10, height: 10, pixelSizeMetres: 100, scale: 1, offset: 0, nodata: null, path: path.join(tmp, 'archive', 'new', 'day.tif'), contentHash: 'f'.repeat(64), acquiredAt: `${LAST_YEAR + 1}-07-10T11:40:00.000Z`, pass: 'day' });
      await replaceDerived(store, GRID_IDS.map((id, k) => ({ obsDate: `${LAST_YEAR + 1}-07-10`, districtId: id, daySceneId: day, nightSceneId: null, albedoSceneId: null, albedoSource: null, tDayKelvin: 310 + k, tNightKelvin: null, albedo: null, atiPerKelvin: null, suhiDayKelvin: 5 + k, suhiNightKelvin: null, status: 'ok' })));
      // while the run runs its rows arrive: answered fresh, untagged, nothing kept
      const during = await get('/api/districts', { 'if-none-match': tag });
      expect(during.statusCode).toBe(200);
      expect(during.headers.etag).toBeUndefined();
      expect(during.headers['cache-control']).toBe('no-store');
      expect(during.json().year).toBe(LAST_YEAR + 1);
      await finishRun(store, runId, { status: 'succeeded' });
      const after = await get('/api/districts', { 'if-none-match': tag });
      expect(after.statusCode).toBe(200);
      expect(after.headers.etag).not.toBe(tag);
      expect(after.json().year).toBe(LAST_YEAR + 1);
      expect(after.json().features.find((f: { id: string }) => f.id === 'a3').properties.suhi_day_k).toBe(7);
      const health = (await get('/api/health')).json();
      expect(health.last_run).toMatchObject({ id: runId, state: 'succeeded' });
      expect(health.years).toContain(LAST_YEAR + 1);
    }
  });
});

describe('answer functions', () => {
  it('give the bodies the routes serve (the report calls them in-process)', async () => {
    const direct = await answerTrends(store, { metric: 'lst_night', season: 'summer' });
    expect((await get('/api/trends?metric=lst_night&season=summer')).json()).toEqual(JSON.parse(JSON.stringify(direct)));
    const map = await answerDistricts(store, { year: 2018, season: 'all', metric: 'ati' });
    expect((await get('/api/districts?year=2018&metric=ati')).json()).toEqual(JSON.parse(JSON.stringify(map)));
  });
});
