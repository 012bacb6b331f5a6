/**
 * Data quality behind the report: which scenes were used, how they were
 * timed, how much of each district the clouds left visible, and which
 * districts or years have too little data for firm conclusions. Pure
 * arithmetic over the scenes and districts answers.
 */
import { monthSelected, seasonYear } from '../../workers/core/trend/index.js';
import { MIN_VALID_FRACTION } from '../../workers/core/defaults.js';
import type { ReportData, SceneAnswerRow } from './answers.js';

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
}

const isLst = (s: SceneAnswerRow) => s.kind === 'lst' && s.acquired_at !== null && (s.pass === 'day' || s.pass === 'night');

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
  for (const s of d.scenes) {
    if (!isLst(s)) continue;
    const y = sceneSeasonYear(s, d);
    if (y === null || y > year) continue;
    const row = years.get(y) ?? { year: y, day: 0, night: 0, notUsed: 0, crossoverDay: 0, crossoverNight: 0 };
    years.set(y, row);
    if (s.state !== 'processed') { row.notUsed++; continue; }
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
  };
}
