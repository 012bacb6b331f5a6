/**
 * Data quality behind the report: which scenes were used, how they were
 * timed, how much of each district the clouds left visible, and which
 * districts or years have too little data for firm conclusions. Pure
 * arithmetic over the scenes and districts answers.
 */
import { monthSelected, seasonYear } from '../../workers/core/trend/index.js';
import { MIN_VALID_FRACTION } from '../../workers/core/defaults.js';
import type { ReportData, ReportScene, SceneAnswerRow } from './answers.js';

export interface YearPassCounts {
  year: number;
  /** LST scenes used (processed) by pass. */
  day: number;
  night: number;
  /** LST scenes of the season that failed or were not processed. */
  notUsed: number;
  /** Used scenes rated crossover (surface temperatures of built and open ground are close then). */
  crossoverDay: number;
  crossoverNight: number;
  /** Used passes made from thermal DN, and of them those without atmospheric correction. */
  thermal: number;
  uncorrected: number;
}

export interface DistrictCoverage {
  district: string;
  name: string;
  /** Mean valid (cloud-free, in range) fraction of the district's pixels over the year's used passes, 0..1. */
  validDay: number | null;
  validNight: number | null;
  /** Used passes of the year where less than the minimum valid fraction was visible. */
  passesBelow: number;
  passes: number;
  /** Dates behind the year's day and night means (from the districts answer). */
  datesDay: number | null;
  datesNight: number | null;
}

/** How many passes had one source (constants or emissivity), the source in plain words. */
export interface SourceCount {
  source: string;
  passes: number;
}

/** Passes whose LST was made here from Level-1 thermal DN. */
export interface ThermalQuality {
  /** Used (processed) thermal passes of the years shown. */
  passes: number;
  /** Made by inverting the radiative transfer equation with the scene's atmosphere. */
  withAtmosphere: number;
  /** Made with the emissivity correction alone ("no atmospheric correction"). */
  emissivityOnly: number;
  /** Where the rescaling and thermal constants came from, most passes first. */
  constants: SourceCount[];
  /** Where the emissivity came from, most passes first. */
  emissivity: SourceCount[];
  /** The passes without atmospheric correction, in time order (season-year, UTC date, pass, file). */
  uncorrected: { year: number; date: string; pass: 'day' | 'night'; file: string }[];
  /** Used passes without atmospheric correction outside the report's months (listed in the appendix, not used here). */
  uncorrectedOutside: number;
}

export interface QualityFigures {
  byYear: YearPassCounts[];
  /** Share of used passes (all years shown) rated crossover, and whether they were kept. */
  crossoverShare: number | null;
  crossoverKept: boolean;
  crossoverSetting: string | null;
  coverage: DistrictCoverage[];
  minValidFraction: number;
  /** Districts whose year has fewer dates than a trend year needs, by night or by day. */
  thinDistricts: DistrictCoverage[];
  /** Years from the first stored year to the report year without any district value. */
  yearsWithoutData: number[];
  /** Districts whose trend left years out or could not be computed, with the reason. */
  trendNotes: { name: string; note: string }[];
  /** Files that failed before their time or kind could be read (listed in the appendix). */
  unreadable: number;
  /** Passes made from thermal DN and how; null when none was used. */
  thermal: ThermalQuality | null;
}

/** A surface-temperature pass: an LST scene, or a thermal (DN) scene whose LST is made on ingest. */
const isLst = (s: SceneAnswerRow) => (s.kind === 'lst' || s.kind === 'thermal') && s.acquired_at !== null && (s.pass === 'day' || s.pass === 'night');

/** Where a pass's constants came from, in plain words (the stored text starts with the kind of source). */
export function constantsSourceWords(stored: string | null): string {
  if (stored === null) return 'not recorded';
  if (stored.startsWith('metadata file')) return "the scene's own metadata file";
  if (stored === 'manifest') return "the archive's manifest";
  const table = /^built-in table \((.*)\)$/.exec(stored);
  if (table) return `the built-in table of published constants (${table[1]})`;
  return stored;
}

/** Where a pass's emissivity came from, in plain words. */
export function emissivitySourceWords(stored: string | null): string {
  if (stored === null) return 'not recorded';
  if (stored.startsWith('emissivity raster')) return 'an emissivity raster given for the scene';
  if (stored.startsWith('per district:')) return "each district's own emissivity value, else a constant";
  if (stored.startsWith('district property')) return "each district's own emissivity value";
  if (stored.startsWith('NDVI-threshold method on')) {
    const what = / and /.test(stored.split(' of ')[0]) ? 'red and near-infrared reflectance' : 'the vegetation index (NDVI)';
    return `the NDVI-threshold method on ${what} ${/ of day scene /.test(stored) ? 'of a nearby day pass' : 'given for the scene'}`;
  }
  const constant = /^constant ([0-9.]+)(?: \((.*)\))?$/.exec(stored);
  if (constant) return `a constant emissivity of ${constant[1]}${constant[2] === 'manifest' ? ' given in the manifest' : ''}`;
  return stored;
}

function tally(words: string[]): SourceCount[] {
  const m = new Map<string, number>();
  for (const w of words) m.set(w, (m.get(w) ?? 0) + 1);
  return [...m].map(([source, passes]) => ({ source, passes })).sort((a, b) => b.passes - a.passes || a.source.localeCompare(b.source));
}

/** The season-year of a scene under the report's months, or null when it falls outside them. */
function sceneSeasonYear(s: SceneAnswerRow, d: ReportData): number | null {
  const t = new Date(s.acquired_at as string);
  const month = t.getUTCMonth() + 1;
  if (!monthSelected(month, d.selection)) return null;
  return seasonYear(t.getUTCFullYear(), month, d.selection);
}

/** The run parameter that decides whether crossover-rated passes are used, if the run recorded one. */
function crossoverParameter(params: Record<string, unknown>): [string, unknown] | null {
  const hit = Object.entries(params).find(([k]) => /crossover/i.test(k));
  return hit ?? null;
}

export function qualityFigures(d: ReportData): QualityFigures {
  const { year } = d.request;
  const params = d.run?.parameters ?? {};
  const minValid = typeof params.minValidFraction === 'number' ? params.minValidFraction : MIN_VALID_FRACTION;
  const years = new Map<number, YearPassCounts>();
  const perDistrict = new Map<string, { day: number[]; night: number[]; below: number }>();
  let used = 0;
  let crossover = 0;
  const thermalUsed: { scene: ReportScene; year: number }[] = [];
  let uncorrectedOutside = 0;
  for (const s of d.scenes) {
    if (!isLst(s)) continue;
    const y = sceneSeasonYear(s, d);
    if (y === null && s.state === 'processed' && s.thermal?.lst_method === 'emissivity_only' && new Date(s.acquired_at as string).getUTCFullYear() <= year) uncorrectedOutside++;
    if (y === null || y > year) continue;
    const row = years.get(y) ?? { year: y, day: 0, night: 0, notUsed: 0, crossoverDay: 0, crossoverNight: 0, thermal: 0, uncorrected: 0 };
    years.set(y, row);
    if (s.state !== 'processed') { row.notUsed++; continue; }
    if (s.kind === 'thermal') {
      thermalUsed.push({ scene: s, year: y });
      row.thermal++;
      if (s.thermal?.lst_method === 'emissivity_only') row.uncorrected++;
    }
    const isCross = s.timing_rating === 'crossover';
    used++;
    if (isCross) crossover++;
    if (s.pass === 'day') { row.day++; if (isCross) row.crossoverDay++; } else { row.night++; if (isCross) row.crossoverNight++; }
    if (y !== year) continue;
    for (const dv of s.districts) {
      const e = perDistrict.get(dv.district) ?? { day: [], night: [], below: 0 };
      perDistrict.set(dv.district, e);
      const v = dv.valid_fraction ?? 0;
      (s.pass === 'day' ? e.day : e.night).push(v);
      if (v < minValid) e.below++;
    }
  }
  const mean = (xs: number[]) => (xs.length ? xs.reduce((a, b) => a + b, 0) / xs.length : null);
  const coverage: DistrictCoverage[] = d.districts.features
    .filter((f) => f.properties.role === 'district')
    .map((f) => {
      const e = perDistrict.get(f.properties.id);
      return {
        district: f.properties.id, name: f.properties.name,
        validDay: e ? mean(e.day) : null, validNight: e ? mean(e.night) : null,
        passesBelow: e?.below ?? 0, passes: e ? e.day.length + e.night.length : 0,
        datesDay: f.properties.dates_day, datesNight: f.properties.dates_night,
      };
    });
  const setting = crossoverParameter(params);
  const kept = setting === null ? true : !(setting[1] === true || setting[1] === 'exclude' || setting[1] === 'leave-out');
  const first = d.health.years.length ? Math.min(...d.health.years) : year;
  const have = new Set(d.health.years);
  const yearsWithoutData: number[] = [];
  for (let y = first; y <= year; y++) if (!have.has(y)) yearsWithoutData.push(y);
  return {
    byYear: [...years.values()].sort((a, b) => a.year - b.year),
    crossoverShare: used ? crossover / used : null,
    crossoverKept: kept,
    crossoverSetting: setting ? `${setting[0]} = ${JSON.stringify(setting[1])}` : null,
    coverage,
    minValidFraction: minValid,
    thinDistricts: coverage.filter((c) => (c.datesNight ?? 0) < d.minDates || (c.datesDay ?? 0) < d.minDates),
    yearsWithoutData,
    trendNotes: d.trendsNight.rows.filter((r) => r.note).map((r) => ({ name: r.name, note: r.note as string })),
    unreadable: d.scenes.filter((s) => s.state === 'failed' && (s.kind === null || s.acquired_at === null)).length,
    thermal: thermalUsed.length === 0 ? null : {
      passes: thermalUsed.length,
      withAtmosphere: thermalUsed.filter((t) => t.scene.thermal?.lst_method === 'rte').length,
      emissivityOnly: thermalUsed.filter((t) => t.scene.thermal?.lst_method === 'emissivity_only').length,
      constants: tally(thermalUsed.map((t) => constantsSourceWords(t.scene.thermal?.constants_source ?? null))),
      emissivity: tally(thermalUsed.map((t) => emissivitySourceWords(t.scene.thermal?.emissivity_source ?? null))),
      uncorrected: thermalUsed.filter((t) => t.scene.thermal?.lst_method === 'emissivity_only')
        .sort((a, b) => String(a.scene.acquired_at).localeCompare(String(b.scene.acquired_at)))
        .map((t) => ({ year: t.year, date: (t.scene.acquired_at as string).slice(0, 10), pass: t.scene.pass as 'day' | 'night', file: t.scene.file })),
      uncorrectedOutside,
    },
  };
}
