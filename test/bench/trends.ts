/**
 * `npm run bench -- --trends`: trend statistics for 1,000 districts × 30 years
 * and Gi* + Moran's I for 1,000 districts, timed in one process (median of
 * repeated runs after a warm-up), with where the time goes. Figures, not
 * assertions.
 */
import { mulberry32 } from '../../workers/core/prng.js';
import {
  benjaminiHochberg, hamedRao, mannKendall, pairwiseSlopes, senFromSlopes, trendOfSeries,
} from '../../workers/core/trend/index.js';
import { giStar, moranI, neighbours } from '../../workers/core/hotspot/index.js';
import type { District } from '../../workers/core/districts/types.js';
import { median } from './timing.js';

export interface TrendsBenchResult {
  districts: number;
  years: number;
  trend_table_ms: number;
  trend_table_us_per_district: number;
  trend_table_hamed_rao_ms: number;
  parts_ms: { mann_kendall: number; sen_slopes: number; hamed_rao: number; fdr: number };
  spatial: { districts: number; queen_weights_ms: number; knn_weights_ms: number; gi_star_ms: number; moran_ms: number; gi_star_us_per_district: number };
}

/**
 * Median CPU milliseconds of this process (user + system) over `reps` runs
 * after two warm-ups: on a machine shared with other work, CPU time moves
 * far less than wall time.
 */
function timeIt(reps: number, fn: () => void): number {
  fn(); fn(); // warm-up (JIT)
  const t: number[] = [];
  for (let r = 0; r < reps; r++) {
    const c0 = process.cpuUsage();
    fn();
    const c = process.cpuUsage(c0);
    t.push((c.user + c.system) / 1000);
  }
  return median(t);
}

export function runTrendsBench(say: (line?: string) => void, reps = 7): TrendsBenchResult {
  const D = 1000, Y = 30;
  const rand = mulberry32(30031);
  const years = Array.from({ length: Y }, (_, i) => 1995 + i);
  const series = Array.from({ length: D }, (_, d) => {
    const slope = d % 4 === 0 ? 0.05 : 0;
    return years.map((y, i) => (rand() < 0.03 ? null : 2 + slope * i + (rand() - 0.5) * 0.8 + (d % 7 === 0 ? Math.round(rand() * 2) / 10 : 0)));
  });
  const dense = series.map((s) => s.filter((v): v is number => v !== null));
  const denseYears = series.map((s) => years.filter((_, i) => s[i] !== null));

  say(`\n[trends] ${D} districts × ${Y} years (3 % missing), median CPU time of ${reps} runs after a warm-up`);
  let ps: (number | null)[] = [];
  const table = timeIt(reps, () => {
    ps = series.map((s) => trendOfSeries(years, s).p);
    benjaminiHochberg(ps);
  });
  const tableHr = timeIt(reps, () => {
    const p = series.map((s) => trendOfSeries(years, s, { serialCorrection: 'hamed-rao' }).p_corrected ?? null);
    benjaminiHochberg(p);
  });
  const mk = timeIt(reps, () => { for (const x of dense) mannKendall(x); });
  const mks = dense.map((x) => mannKendall(x));
  const sen = timeIt(reps, () => { for (let d = 0; d < D; d++) senFromSlopes(pairwiseSlopes(denseYears[d], dense[d]), mks[d].varS); });
  const hr = timeIt(reps, () => { for (let d = 0; d < D; d++) hamedRao(denseYears[d], dense[d], mks[d].s, mks[d].varS, 0.01); });
  const fdr = timeIt(reps, () => { benjaminiHochberg(ps); });
  say(`  trend table (Mann–Kendall + Sen slope and interval + BH): ${table.toFixed(1)} ms = ${((table * 1000) / D).toFixed(1)} µs per district (goal: under 100 ms)`);
  say(`  with the Hamed–Rao correction: ${tableHr.toFixed(1)} ms = ${((tableHr * 1000) / D).toFixed(1)} µs per district`);
  say(`  where the time goes: Mann–Kendall S, Var(S), tau ${mk.toFixed(1)} ms; Sen pairwise slopes + selection of median and interval ranks ${sen.toFixed(1)} ms; ` +
    `Hamed–Rao (ranks, autocorrelation) ${hr.toFixed(1)} ms; BH ${fdr.toFixed(2)} ms; the rest (missing values, result objects) ${Math.max(0, table - mk - sen - fdr).toFixed(1)} ms (parts timed separately; they need not add up exactly)`);

  // 1,000 square districts on a 40 × 25 grid (about 1 km each at 45° N).
  const cols = 40;
  const districts: District[] = Array.from({ length: D }, (_, i) => {
    const lon = 10 + (i % cols) * 0.0127, lat = 45 + Math.floor(i / cols) * 0.009;
    const ring = [[lon, lat], [lon + 0.0127, lat], [lon + 0.0127, lat + 0.009], [lon, lat + 0.009], [lon, lat]];
    return { id: `D${i}`, name: `D${i}`, geometry: [[ring]], properties: {}, areaSquareMetres: 1e6 };
  });
  const x = districts.map((_, i) => 300 + Math.sin(i / 40) + rand());
  let nb: number[][] = [];
  const queen = timeIt(2, () => { nb = neighbours(districts, { kind: 'queen' }); });
  const knn = timeIt(2, () => { neighbours(districts, { kind: 'knn', k: 6 }); });
  const gi = timeIt(reps, () => { giStar(x, nb); });
  const moran = timeIt(reps, () => { moranI(x, nb); });
  say(`\n[hot spots] ${D} districts (40 × 25 grid of squares)`);
  say(`  Gi*: ${gi.toFixed(2)} ms (${((gi * 1000) / D).toFixed(2)} µs per district); Moran's I with both variances: ${moran.toFixed(2)} ms`);
  say(`  neighbour lists (once per query): queen ${queen.toFixed(0)} ms (pairwise box test, then segment tests for boxes that meet), k = 6 nearest ${knn.toFixed(0)} ms (all pairs of centroids)`);
  return {
    districts: D, years: Y, trend_table_ms: table, trend_table_us_per_district: (table * 1000) / D, trend_table_hamed_rao_ms: tableHr,
    parts_ms: { mann_kendall: mk, sen_slopes: sen, hamed_rao: hr, fdr },
    spatial: { districts: D, queen_weights_ms: queen, knn_weights_ms: knn, gi_star_ms: gi, moran_ms: moran, gi_star_us_per_district: (gi * 1000) / D },
  };
}
