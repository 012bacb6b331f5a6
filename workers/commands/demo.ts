/**
 * `heatledger demo`: generate the invented city's archive (first run only), run
 * the whole pipeline embedded, and print the hottest districts.
 */
import { existsSync, readdirSync } from 'node:fs';
import { mkdir, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { runtimeConfig } from '../config.js';
import type { Row } from '../format.js';
import { CAUTION_SHORT } from './common.js';
import { summaryLines, throwIfRunFailed } from './ingest.js';

export interface DemoOptions {
  archive?: string;
  dataDir?: string;
  threads?: number;
}

function mean(values: (number | null | undefined)[]): number | null {
  const v = values.filter((x): x is number => typeof x === 'number' && Number.isFinite(x));
  return v.length ? v.reduce((s, x) => s + x, 0) / v.length : null;
}

export async function runDemoCommand(opts: DemoOptions): Promise<void> {
  const { generateArchive, defaultArchiveDir } = await import('../../demo-data/generate.js');
  const { CITY_NAME, CITY_SLUG } = await import('../../demo-data/city.js');
  const archive = resolve(opts.archive ?? defaultArchiveDir());
  const districtsPath = join(archive, `${CITY_SLUG}_districts.geojson`);
  const haveArchive = existsSync(districtsPath) && readdirSync(archive).some((f) => f.endsWith('.tif'));
  if (!haveArchive) {
    process.stderr.write(`Generating the demo archive of ${CITY_NAME} (an invented city) in ${archive} ...\n`);
    await generateArchive(archive);
  } else {
    process.stderr.write(`Using the demo archive in ${archive}\n`);
  }
  const config = runtimeConfig({ dataDir: opts.dataDir });
  const { runPipeline } = await import('../pipeline.js');
  const { openConfiguredStore } = await import('../store/configured.js');
  process.stderr.write(`Running the pipeline (${config.mode}; results in ${config.databaseUrl ? 'the PostgreSQL server' : resolve(config.dataDir)}) ...\n`);
  const summary = await runPipeline({ inputs: [archive], districtsPath, threads: opts.threads }, config);
  process.stdout.write(summaryLines(summary).join('\n') + '\n');
  throwIfRunFailed(summary);

  const { districtTable, renderTable } = await import('./table.js');
  const store = await openConfiguredStore(config);
  let byDate: Row[];
  let byYear: Row[];
  const landUse = new Map<string, string>();
  try {
    byDate = await districtTable(store, 'date');
    byYear = await districtTable(store, 'year');
    const { listDistricts } = await import('../store/repo.js');
    for (const d of await listDistricts(store)) {
      if (typeof d.properties.land_use === 'string') landUse.set(d.id, d.properties.land_use.replace(/_/g, ' '));
    }
  } finally {
    await store.close();
  }
  const outDir = resolve(config.dataDir);
  await mkdir(outDir, { recursive: true });
  const dateCsv = join(outDir, 'district-table-by-date.csv');
  const yearCsv = join(outDir, 'district-table-by-year.csv');
  await writeFile(dateCsv, renderTable(byDate, 'date', 'csv'));
  await writeFile(yearCsv, renderTable(byYear, 'year', 'csv'));

  const districts = [...new Set(byDate.filter((r) => r.district !== 'rural').map((r) => String(r.district)))];
  const overall = districts.map((id) => {
    const rows = byDate.filter((r) => r.district === id);
    return {
      id,
      name: String(rows[0]?.name ?? id),
      day: mean(rows.map((r) => r.suhi_day as number | null)),
      night: mean(rows.map((r) => r.suhi_night as number | null)),
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
  out.push('(district land-surface temperature minus the rural reference ring, mean over all clear-enough dates)');
  out.push('');
  out.push('Hottest by day:');
  for (const d of top('day')) out.push(`  ${label(d).padEnd(34)} ${(d.day as number) >= 0 ? '+' : ''}${(d.day as number).toFixed(1)} K warmer than the countryside`);
  out.push('Hottest by night:');
  for (const d of top('night')) out.push(`  ${label(d).padEnd(34)} ${(d.night as number) >= 0 ? '+' : ''}${(d.night as number).toFixed(1)} K warmer than the countryside`);
  out.push('Water holds the day\'s heat into the night, so rivers and lakes often top the night list;');
  out.push('for heat exposure look at the built-up districts among them.');
  out.push('');
  out.push(`Full district tables (Kelvin; ATI in 1/K): ${dateCsv}`);
  out.push(`                                          ${yearCsv}`);
  out.push(`Try: npx heatledger table --level year --data-dir ${config.dataDir}`);
  out.push('');
  out.push(`Caution: ${CAUTION_SHORT}`);
  process.stdout.write(out.join('\n') + '\n');
}
