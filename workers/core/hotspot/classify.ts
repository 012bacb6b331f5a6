/**
 * Hot and cold spots from Gi* z and p (or FDR q): hot when z > 0, cold when
 * z < 0, at the highest of 99 / 95 / 90 % confidence the p-value reaches
 * (p ≤ 0.01 / 0.05 / 0.10); otherwise none (common practice, no source).
 */
export type Spot = 'hot' | 'cold' | 'none';

export interface SpotClass {
  spot: Spot;
  /** 99, 95 or 90 (percent); null for none. */
  confidence: 99 | 95 | 90 | null;
}

/** @example classifySpot(2.7, 0.007) // { spot: 'hot', confidence: 99 } */
export function classifySpot(z: number | null, p: number | null): SpotClass {
  if (z === null || p === null || !Number.isFinite(z) || !Number.isFinite(p) || z === 0) return { spot: 'none', confidence: null };
  const confidence = p <= 0.01 ? 99 : p <= 0.05 ? 95 : p <= 0.1 ? 90 : null;
  if (confidence === null) return { spot: 'none', confidence: null };
  return { spot: z > 0 ? 'hot' : 'cold', confidence };
}
