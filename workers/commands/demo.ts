/**
 * `heatledger demo`: generate the invented city's archive (first run only), run
 * the whole pipeline embedded, and print the hottest districts.
 */
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { mkdir, writeFile } from 'node:fs/promises';
import { join, relative, resolve } from 'node:path';
import { MIN_DATES_PER_YEAR } from '../core/defaults.js';
import { runtimeConfig } from '../run/config.js';
import type { Row } from '../format.js';
import type { Store } from '../store/interface.js';
import { CAUTION_SHORT } from './common.js';
import { sceneProgressDisplay, summaryLines, throwIfRunFailed } from './ingest.js';
import { startProgress } from './progress.js';

export interface DemoOptions {
  archive?: string;
  dataDir?: string;
  threads?: number;
}

/** The visible folder, in the working directory, the demo writes its files into (not the store). */
export const DEMO_OUTPUT_DIR = 'heatledger-output';

/** A file the demo wrote, named in its closing lines. */
export interface DemoOutput {
  path: string;
  what: string;
}

/**
 * The demo's exports (each with its sidecar PATH.json): the district tables per
 * date and per year as CSV, per scene as Parquet, and the districts with their
 * yearly values and trends as GeoJSON.
 */
export async function writeDemoExports(store: Store, outDir: string): Promise<DemoOutput[]> {
  const { exportSpec, writeExport } = await import('./export.js');
  const files: { name: string; format: 'csv' | 'geojson' | 'parquet'; level: 'scene' | 'date' | 'year'; what: string }[] = [
    { name: 'district-table-by-date.csv', format: 'csv', level: 'date', what: 'district table, one row per district and date (K; ATI 1/K)' },
    { name: 'district-table-by-year.csv', format: 'csv', level: 'year', what: 'district table, one row per district and year' },
    { name: 'district-table-by-scene.parquet', format: 'parquet', level: 'scene', what: 'one row per district and scene (pass), typed Parquet' },
    { name: 'districts.geojson', format: 'geojson', level: 'year', what: 'districts with yearly values and trends, for GIS tools' },
  ];
  const out: DemoOutput[] = [];
  for (const f of files) {
    const result = await writeExport(store, await exportSpec({ format: f.format, level: f.level, out: join(outDir, f.name) }));
    out.push({ path: result.path, what: f.what }, { path: result.sidecar, what: 'its sidecar: version, parameters, scene hashes' });
  }
  return out;
}

/** The closing lines that name every file the demo wrote (relative to the output folder). */
export function demoOutputLines(outputs: readonly DemoOutput[], outDir: string): string[] {
  const shown = (p: string) => relative(outDir, p) || p;
  const width = Math.max(0, ...outputs.map((o) => shown(o.path).length));
  return [`Files written into ${outDir}:`, ...outputs.map((o) => `  ${shown(o.path).padEnd(width)}  ${o.what}`)];
}

function mean(values: (number | null | undefined)[]): number | null {
  const v = values.filter((x): x is number => typeof x === 'number' && Number.isFinite(x));
  return v.length ? v.reduce((s, x) => s + x, 0) / v.length : null;
}

/**
 * The demo archive: ten summers of eight day/night pairs, with the city's
 * built-in warming made 1.5 times stronger (0.12 K/yr in the core and industry,
 * 0.225 K/yr in the growing northern suburb). Six summers at the city's own rates
 * gave the trend test almost no power after FDR across 17 districts; with these
 * settings a simulation at the noise of the demo's yearly means finds each
 * warming district in nearly every run.
 */
const DEMO_ARCHIVE = { firstYear: 2015, years: 10, pairsPerYear: 8, warmingScale: 1.5, nightAsThermal: true } as const;

export async function runDemoCommand(opts: DemoOptions): Promise<void> {
  const { generateArchive, defaultArchiveDir } = await import('../../demo-data/generate.js');
  const { CITY_NAME, CITY_SLUG, DISTRICTS } = await import('../../demo-data/city.js');
  const archive = resolve(opts.archive ?? defaultArchiveDir());
  const districtsPath = join(archive, `${CITY_SLUG}_districts.geojson`);
  const waterPath = join(archive, `${CITY_SLUG}_water.geojson`);
  const { prepareDemoArchive } = await import('./demo-archive.js');
  const hadFolder = existsSync(archive);
  const state = await prepareDemoArchive({
    dir: archive,
    settingsFile: `${CITY_SLUG}_archive.json`,
    settings: DEMO_ARCHIVE,
    isComplete: () => existsSync(districtsPath) && existsSync(waterPath) && readdirSync(archive).some((f) => f.endsWith('.tif')),
    generate: async () => {
      if (hadFolder && existsSync(resolve(runtimeConfig({ dataDir: opts.dataDir }).dataDir))) {
        process.stderr.write(`Note: the demo archive changed; remove ${resolve(runtimeConfig({ dataDir: opts.dataDir }).dataDir)} for a store that holds only the new archive's scenes\n`);
      }
      process.stderr.write(`Generating the demo archive of ${CITY_NAME} (an invented city) in ${archive} ...\n`);
      const progress = startProgress({ label: 'generated scenes', total: 0 });
      try {
        await generateArchive(archive, {
          firstYear: DEMO_ARCHIVE.firstYear, years: DEMO_ARCHIVE.years, pairsPerYear: DEMO_ARCHIVE.pairsPerYear,
          trendsKelvinPerYear: Object.fromEntries(DISTRICTS.map((d) => [d.id, d.trendKelvinPerYear * DEMO_ARCHIVE.warmingScale])),
          nightAsThermal: DEMO_ARCHIVE.nightAsThermal,
        }, (written, total) => progress.update(written, '', total));
      } finally {
        progress.stop();
      }
    },
  });
  if (state === 'ready') process.stderr.write(`Using the demo archive in ${archive}\n`);
  const config = runtimeConfig({ dataDir: opts.dataDir });
  const { runPipeline } = await import('../run/pipeline.js');
  const { openConfiguredStore } = await import('../store/configured.js');
  process.stderr.write(`Running the pipeline (${config.mode}; results in ${config.databaseUrl ? 'the PostgreSQL server' : resolve(config.dataDir)}) ...\n`);
  // The rural ring on land only: the sea fills about a quarter of the default ring, is some 6 K warmer
  // than the fields at night and 9.5 K cooler by day, and clouds hide a different share of it on every
  // date, so a ring with the sea in it would add the same year-to-year noise to every district's SUHI.
  // The night passes come as Level-1 thermal DN; the manifest gives the day passes' NDVI and most nights' atmosphere.
  const manifestPath = join(archive, `${CITY_SLUG}_manifest.csv`);
  const display = sceneProgressDisplay();
  let summary: Awaited<ReturnType<typeof runPipeline>>;
  try {
    summary = await runPipeline({ inputs: [archive], districtsPath, waterPath, manifestPath, threads: opts.threads, onProgress: display.onProgress }, config);
  } finally {
    display.stop();
  }
  process.stdout.write(summaryLines(summary).join('\n') + '\n');
  throwIfRunFailed(summary);
  process.stdout.write((await thermalPassLines(config)).join('\n') + '\n');

  const { districtTable } = await import('../store/district-table.js');
  const { districtTrends, districtHotspots } = await import('../store/district-statistics.js');
  const store = await openConfiguredStore(config);
  let byDate: Row[];
  let byYear: Row[];
  let trends: Awaited<ReturnType<typeof districtTrends>>['rows'];
  let hotspots: Awaited<ReturnType<typeof districtHotspots>> | null = null;
  const landUse = new Map<string, string>();
  // Every file the demo writes goes into this list; the closing lines name them.
  const outputs: DemoOutput[] = [];
  const outDir = resolve(DEMO_OUTPUT_DIR);
  await mkdir(outDir, { recursive: true });
  try {
    byDate = await districtTable(store, 'date');
    byYear = await districtTable(store, 'year');
    trends = (await districtTrends(store, { metric: 'suhi_night', season: 'summer', alpha: 0.05, serialCorrection: 'none', ciRanks: 'rounded', minDates: MIN_DATES_PER_YEAR })).rows;
    const lastYear = Math.max(...byYear.map((r) => Number(r.year)));
    if (Number.isFinite(lastYear)) {
      hotspots = await districtHotspots(store, { metric: 'suhi_night', from: lastYear, to: lastYear, season: 'summer', weights: 'queen', minDates: MIN_DATES_PER_YEAR });
    }
    const { listDistricts } = await import('../store/districts.js');
    for (const d of await listDistricts(store)) {
      if (typeof d.properties.land_use === 'string') landUse.set(d.id, d.properties.land_use.replace(/_/g, ' '));
    }
    outputs.push(...await writeDemoExports(store, outDir));
    outputs.push(...await (await import('./report.js')).writeDemoReport(store, outDir, { place: CITY_NAME, slug: CITY_SLUG }));
  } finally {
    await store.close();
  }

  const districts = [...new Set(byDate.filter((r) => r.district !== 'rural').map((r) => String(r.district)))];
  const overall = districts.map((id) => {
    const rows = byDate.filter((r) => r.district === id);
    return {
      id,
      name: String(rows[0]?.name ?? id),
      day: mean(rows.map((r) => r.suhi_day_k as number | null)),
      night: mean(rows.map((r) => r.suhi_night_k as number | null)),
      dates: rows.length,
    };
  });
  const years = [...new Set(byYear.map((r) => Number(r.year)))].sort();
  const label = (d: { id: string; name: string }) => (landUse.has(d.id) ? `${d.name} (${landUse.get(d.id)})` : d.name);
  const top = (key: 'day' | 'night') =>
    overall.filter((d) => d[key] !== null).sort((a, b) => (b[key] as number) - (a[key] as number)).slice(0, 5);
  const out: string[] = [];
  out.push('');
  out.push(`${CITY_NAME} (invented demo city), ${years[0]}–${years[years.length - 1]}: surface urban heat island intensity`);
  out.push('(district land-surface temperature minus the rural reference: the land 2–10 km outside the city, with the sea,');
  out.push('estuary and river left out; mean over all clear-enough dates)');
  out.push('');
  out.push('Hottest by day:');
  for (const d of top('day')) out.push(`  ${label(d).padEnd(34)} ${(d.day as number) >= 0 ? '+' : ''}${(d.day as number).toFixed(1)} K warmer than the countryside`);
  out.push('Hottest by night:');
  for (const d of top('night')) out.push(`  ${label(d).padEnd(34)} ${(d.night as number) >= 0 ? '+' : ''}${(d.night as number).toFixed(1)} K warmer than the countryside`);
  out.push('Water holds the day\'s heat into the night, so rivers and lakes often top the night list;');
  out.push('for heat exposure look at the built-up districts among them.');
  out.push('');
  const builtInOf = (id: string): number => (DISTRICTS.find((d) => d.id === id)?.trendKelvinPerYear ?? 0) * DEMO_ARCHIVE.warmingScale;
  const rising = trends.filter((t) => t.direction === 'increasing').sort((a, b) => (b.slope_per_year as number) - (a.slope_per_year as number));
  out.push(`Night heat island rising significantly, summers ${years[0]}–${years[years.length - 1]} (Mann–Kendall, Benjamini–Hochberg q ≤ 0.05 across ${trends.length} districts;`);
  out.push('Sen slope per decade with its 95 % interval):');
  if (rising.length === 0) out.push('  none');
  for (const t of rising) {
    const dec = (x: number | null): string => (x === null ? '-' : `${x * 10 >= 0 ? '+' : ''}${(x * 10).toFixed(2)}`);
    const builtIn = builtInOf(t.district);
    out.push(`  ${label({ id: t.district, name: t.name }).padEnd(34)} ${dec(t.slope_per_year)} K/decade [${dec(t.slope_ci_lower)}, ${dec(t.slope_ci_upper)}]  q = ${(t.q as number).toPrecision(2)}  (built into the demo: ${dec(builtIn)})`);
  }
  if (rising.some((t) => t.slope_ci_lower !== null && t.slope_ci_upper !== null
    && (builtInOf(t.district) < t.slope_ci_lower || builtInOf(t.district) > t.slope_ci_upper))) {
    out.push('  A 95 % interval misses the true slope about one time in twenty, so with several warming districts');
    out.push('  one interval that leaves out the built-in warming is no surprise.');
  }
  if (rising.some((t) => !(DISTRICTS.find((d) => d.id === t.district)?.trendKelvinPerYear))) {
    out.push('  A district the demo does not warm is listed: a false discovery, which FDR control at q ≤ 0.05 allows');
    out.push('  now and then (summer means vary with the weather and with which dates were clear).');
  }
  if (hotspots) {
    const hot = hotspots.rows.filter((r) => r.spot === 'hot').sort((a, b) => (b.gi_z as number) - (a.gi_z as number));
    out.push(`Night hot spots of summer ${years[years.length - 1]} (Getis–Ord Gi*, queen neighbours, 90/95/99 % confidence):`);
    if (hot.length === 0) out.push('  none');
    for (const h of hot) out.push(`  ${label({ id: h.district, name: h.name }).padEnd(34)} z = ${(h.gi_z as number).toFixed(2)}  (${h.confidence} %)`);
    if (hotspots.moran) out.push(`  Global Moran's I = ${hotspots.moran.i.toFixed(3)} (randomisation p = ${hotspots.moran.p_randomisation.toPrecision(2)})`);
  }
  out.push('Yearly means depend on how many clear dates each summer had; SUHI depends on the rural reference ring.');
  out.push(`Try: npx heatledger trend --metric suhi_night --season summer --data-dir ${config.dataDir}`);
  out.push(`     npx heatledger hotspots --metric suhi_night --year ${years[years.length - 1]} --data-dir ${config.dataDir}`);
  out.push('');
  out.push(...demoOutputLines(outputs, outDir));
  out.push(`Try: npx heatledger table --level year --data-dir ${config.dataDir}`);
  out.push(`     npx heatledger export --format csv --level year --metric suhi_night --out my-table.csv --data-dir ${config.dataDir}`);
  out.push(`See it on a map: npx heatledger serve --data-dir ${config.dataDir}, then open http://127.0.0.1:8080/`);
  out.push('');
  out.push(`Caution: ${CAUTION_SHORT}`);
  process.stdout.write(out.join('\n') + '\n');
}

/** Which passes were converted from thermal DN and how (counted by method, constants and emissivity). */
async function thermalPassLines(config: ReturnType<typeof runtimeConfig>): Promise<string[]> {
  const { openConfiguredStore } = await import('../store/configured.js');
  const { listThermalScenes } = await import('../store/thermal-scenes.js');
  const { NO_ATMOSPHERIC_CORRECTION_TEXT } = await import('../core/defaults.js');
  const store = await openConfiguredStore(config);
  try {
    const rows = (await listThermalScenes(store)).filter((r) => r.status === 'processed');
    if (rows.length === 0) return [];
    const rte = rows.filter((r) => r.lstMethod === 'rte');
    const plain = rows.filter((r) => r.lstMethod === 'emissivity_only');
    const fromMetadata = rows.filter((r) => r.thermalConstantsSource?.startsWith('metadata file')).length;
    const fromNdvi = rows.filter((r) => r.emissivitySource?.startsWith('NDVI-threshold')).length;
    const name = (p: string) => p.replace(/^.*[\\/]/, '');
    const out = [
      `${rows.length} night pass(es) converted from Level-1 thermal DN (band 10) to LST; constants from the scene's metadata file for ${fromMetadata},`,
      `emissivity by the NDVI-threshold method on the previous day pass's NDVI for ${fromNdvi}:`,
      `  ${rte.length} by inverting the radiative transfer equation with the manifest's transmittance and path radiances;`,
      `  ${plain.length} with the emissivity correction alone (${NO_ATMOSPHERIC_CORRECTION_TEXT.replace(/^no atmospheric correction: LST from the emissivity correction alone, /, '')})`,
    ];
    if (plain.length) out.push(`    ${plain.map((r) => name(r.path)).slice(0, 4).join(', ')}${plain.length > 4 ? `, ... (${plain.length - 4} more)` : ''}`);
    out.push('  `heatledger status` lists every converted pass and how its LST was made.');
    return out;
  } finally {
    await store.close();
  }
}
