/**
 * The yearly report on a store whose night passes arrived as Level-1 thermal DN
 * (a small generated archive of the invented city: 2 summers of 3 day/night pairs,
 * 500 m pixels; the generator gives every night but the last of a summer its
 * atmosphere in the manifest, so 4 nights are made by inverting the radiative
 * transfer equation and 2 with the emissivity correction alone).
 *
 * Checks: the data-quality section counts the thermal passes by how their LST was
 * made, names the source of their constants and emissivity, and for the passes
 * without atmospheric correction prints the flag with the one wording of its typical
 * size (NO_ATMOSPHERIC_CORRECTION_TEXT) and what it means for the conclusions; the
 * appendix marks each such scene; thermal passes count as night passes. Every count
 * is checked against the scenes table of the store itself (lst_method per scene).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cleanEnv, cliOk, ensurePipelineBuild, killAllChildren, makeArchive } from '../support/pipeline-harness.js';
import { openStore } from '../../workers/store/index.js';
import { NO_ATMOSPHERIC_CORRECTION_TEXT } from '../../workers/core/defaults.js';
import { buildReportHtml } from '../../workers/commands/report.js';
import { UNCORRECTED_MEANING } from '../../api/report/sections.js';

await ensurePipelineBuild();
const tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-report-thermal-'));
const dataDir = path.join(tmp, 'store');
const FIRST_YEAR = 2021;
const YEAR = 2022;
let html = '';
let thermal: { file: string; at: string; method: string; constants: string; emissivity: string }[] = [];

/** Text with the report's character references decoded (it escapes & < > " ' as &#NN;). */
const decoded = (s: string) => s.replace(/&#(\d+);/g, (_m, n: string) => String.fromCharCode(Number(n)));
/** The inner HTML of the section with this id. */
const section = (id: string) => {
  const m = new RegExp(`<section id="${id}"[^>]*>([\\s\\S]*?)</section>`).exec(html);
  if (!m) throw new Error(`no section ${id}`);
  return m[1];
};
/** Tags removed, blanks folded, references decoded: the words a reader sees. */
const words = (s: string) => decoded(s.replace(/<[^>]+>/g, ' ')).replace(/\s+/g, ' ').trim();

beforeAll(async () => {
  const archive = await makeArchive(path.join(tmp, 'archive'), { firstYear: FIRST_YEAR, years: 2, pairsPerYear: 3, pixelSizeMetres: 500, nightAsThermal: true });
  await cliOk(['ingest', path.join(tmp, 'archive'), '--districts', archive.districtsPath, '--manifest', archive.manifestPath as string,
    '--data-dir', dataDir, '--no-progress', '--threads', '1'], cleanEnv(), 300_000);
  const store = await openStore({ dataDir });
  try {
    thermal = await store.query(
      `SELECT path AS file, acquired_at AS at, lst_method AS method, thermal_constants_source AS constants, emissivity_source AS emissivity
       FROM scenes WHERE kind = 'thermal' AND status = 'processed' ORDER BY acquired_at`);
    html = await buildReportHtml(store, { season: 'all', units: 'K', alpha: 0.05, place: null, baseline: null, year: YEAR });
  } finally {
    await store.close();
  }
}, 600_000);

afterAll(async () => {
  await killAllChildren();
  rmSync(tmp, { recursive: true, force: true });
});

describe('report: passes made from thermal DN', () => {
  it('the store holds the passes the generated archive was made with (the inputs of the checks below)', () => {
    expect(thermal.map((t) => t.method).sort()).toEqual(['emissivity_only', 'emissivity_only', 'rte', 'rte', 'rte', 'rte']);
    expect(thermal.every((t) => t.constants.startsWith('metadata file '))).toBe(true);
    expect(thermal.every((t) => t.emissivity.startsWith('NDVI-threshold method on ') && t.emissivity.includes(' of day scene '))).toBe(true);
  });

  it('the data-quality section counts them by method and names where constants and emissivity came from', () => {
    const q = words(section('quality'));
    const rte = thermal.filter((t) => t.method === 'rte').length;
    const only = thermal.filter((t) => t.method === 'emissivity_only').length;
    expect(q).toContain(`Of the passes used, ${thermal.length} passes arrived as raw readings of the satellite's thermal band (Level-1 digital numbers)`);
    expect(q).toContain(`Corrected for the atmosphere (radiative transfer equation inverted with the scene's transmittance and path radiances) ${rte}`);
    expect(q).toContain(`Emissivity correction only: no atmospheric correction ${only}`);
    expect(q).toContain(`Rescaling and thermal constants: ${thermal.length} from the scene's own metadata file.`);
    expect(q).toContain(`Emissivity of the surface: ${thermal.length} from the NDVI-threshold method on the vegetation index (NDVI) of a nearby day pass.`);
  });

  it('flags the passes without atmospheric correction with the sentence on its size and what it means', () => {
    const m = /<div class="flag" id="no-atmospheric-correction">([\s\S]*?)<\/div>/.exec(section('quality'));
    expect(m).not.toBeNull();
    const flag = words(m![1]);
    const flagged = thermal.filter((t) => t.method === 'emissivity_only');
    const inYear = flagged.filter((t) => t.at.startsWith(String(YEAR)));
    expect(inYear).toHaveLength(1);
    expect(flag).toContain(`Flag: no atmospheric correction on ${flagged.length} passes (all at night), of which ${inYear.length} in ${YEAR} (${inYear.map((t) => t.at.slice(0, 10)).join(', ')}).`);
    // the one wording of its typical size, as the defaults module holds it
    expect(flag).toContain(NO_ATMOSPHERIC_CORRECTION_TEXT.charAt(0).toUpperCase() + NO_ATMOSPHERIC_CORRECTION_TEXT.slice(1));
    // what it means: night LST biased low, so ATI of those dates too small and SUHI less affected (common practice, no source)
    expect(flag).toContain(UNCORRECTED_MEANING);
    expect(UNCORRECTED_MEANING).toMatch(/too low/);
    expect(UNCORRECTED_MEANING).toMatch(/\(ATI\) comes out too small/);
  });

  it('the appendix marks each pass without atmospheric correction, and only those', () => {
    const rows = [...section('appendix').matchAll(/<tr( class="flagged")?><td>([^<]+)<\/td>[\s\S]*?<\/tr>/g)].map((r) => ({ flagged: !!r[1], file: decoded(r[2]), row: words(r[0]) }));
    for (const t of thermal) {
      const row = rows.find((r) => r.file === path.basename(t.file));
      expect(row, t.file).toBeDefined();
      expect(row!.flagged, t.file).toBe(t.method === 'emissivity_only');
      expect(row!.row, t.file).toContain(t.method === 'rte' ? 'thermal DN atmosphere corrected' : 'thermal DN no atmospheric correction');
    }
    expect(rows.filter((r) => r.flagged)).toHaveLength(thermal.filter((t) => t.method === 'emissivity_only').length);
  });

  it('thermal passes count as night passes of their year, and the title says how many were converted', () => {
    const yearRows = [...section('quality').matchAll(/<tr><td>(\d{4})<\/td><td class="n">(\d+)<\/td><td class="n">(\d+)<\/td><td class="n">\d+<\/td><td class="n">(\d+)<\/td><td class="n">(\d+)<\/td>/g)]
      .map((r) => ({ year: Number(r[1]), night: Number(r[3]), thermal: Number(r[4]), uncorrected: Number(r[5]) }));
    expect(yearRows.map((r) => r.year)).toEqual([FIRST_YEAR, YEAR]);
    for (const r of yearRows) {
      const ofYear = thermal.filter((t) => t.at.startsWith(String(r.year)));
      expect(r).toEqual({ year: r.year, night: ofYear.length, thermal: ofYear.length, uncorrected: ofYear.filter((t) => t.method === 'emissivity_only').length });
    }
    expect(words(/<header class="title">([\s\S]*?)<\/header>/.exec(html)![1])).toMatch(new RegExp(`satellite passes \\(${thermal.length} of them from raw thermal readings\\)`));
  });
});
