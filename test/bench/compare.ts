/**
 * Agreement of two zonal tables (ours and the peer's JSON rows).
 */

/** The JSON row both programs print. */
export interface StatsRow {
  district: string;
  pixels: number;
  valid: number;
  valid_fraction: number | null;
  mean: number | null;
  std: number | null;
  min: number | null;
  max: number | null;
  median: number | null;
  p10: number | null;
  p90: number | null;
}

const FLOAT_FIELDS = ['mean', 'std', 'min', 'max', 'median', 'p10', 'p90'] as const;

/** Largest tolerated mean difference, K: our output is printed to 0.0001 K, so half of that plus 1e-6. */
export const MEAN_TOLERANCE_KELVIN = 1e-6 + 0.00005;

export interface Agreement {
  agree: boolean;
  /** Rows compared (districts in both tables). */
  rows: number;
  /** Human-readable reasons for disagreement (first few). */
  problems: string[];
  /** Largest |ours - peer| per float field, K, over districts where both are numbers. */
  worst: Record<string, { difference: number; district: string | null }>;
}

/**
 * Compare two tables row by row (matched on district id): pixels and valid
 * must be equal, means within {@link MEAN_TOLERANCE_KELVIN}, nulls in the
 * same places. Other float fields are reported as worst differences.
 */
export function compareTables(ours: readonly StatsRow[], peer: readonly StatsRow[]): Agreement {
  const problems: string[] = [];
  const byId = new Map(peer.map((r) => [r.district, r]));
  const worst: Agreement['worst'] = {};
  for (const f of FLOAT_FIELDS) worst[f] = { difference: 0, district: null };
  if (ours.length !== peer.length) problems.push(`ours has ${ours.length} rows, the peer ${peer.length}`);
  let rows = 0;
  for (const o of ours) {
    const p = byId.get(o.district);
    if (!p) { problems.push(`district ${o.district} missing from the peer's table`); continue; }
    rows++;
    if (o.pixels !== p.pixels) problems.push(`${o.district}: pixels ${o.pixels} vs peer ${p.pixels}`);
    if (o.valid !== p.valid) problems.push(`${o.district}: valid ${o.valid} vs peer ${p.valid}`);
    for (const f of FLOAT_FIELDS) {
      const a = o[f], b = p[f];
      if (a === null || b === null) {
        if (a !== b) problems.push(`${o.district}: ${f} ${a} vs peer ${b}`);
        continue;
      }
      const d = Math.abs(a - b);
      if (d > worst[f].difference) worst[f] = { difference: d, district: o.district };
      if (f === 'mean' && !(d <= MEAN_TOLERANCE_KELVIN)) problems.push(`${o.district}: mean ${a} vs peer ${b} K (|d| = ${d.toExponential(2)} K)`);
    }
  }
  return { agree: problems.length === 0, rows, problems, worst };
}
