/**
 * Ranking districts by a value, with the change of rank against an earlier year.
 *
 * Ties share the best rank of their group and the next rank skips ("1224",
 * standard competition ranking; R's `rank(ties.method = "min")`, SciPy's
 * `rankdata(method="min")`). Values that are null or not finite are not ranked.
 */

export type RankOrder = 'desc' | 'asc';

export interface RankedItem<K> {
  key: K;
  value: number;
  /** 1 = highest value for 'desc', lowest for 'asc'. */
  rank: number;
}

/**
 * Items ranked by value; ties broken for the listing order only by the key
 * order given (`keyOrder`), never for the rank itself.
 *
 * @example rankValues([{ key: 'a', value: 3 }, { key: 'b', value: 5 }, { key: 'c', value: 3 }], 'desc')
 *   // b rank 1, a rank 2, c rank 2
 */
export function rankValues<K>(
  items: readonly { key: K; value: number | null }[],
  order: RankOrder,
  keyOrder: (a: K, b: K) => number = () => 0,
): RankedItem<K>[] {
  const kept = items.filter((i): i is { key: K; value: number } => i.value !== null && Number.isFinite(i.value));
  const sign = order === 'desc' ? -1 : 1;
  kept.sort((a, b) => sign * (a.value - b.value) || keyOrder(a.key, b.key));
  const out: RankedItem<K>[] = [];
  for (let i = 0; i < kept.length; i++) {
    const rank = i > 0 && kept[i].value === kept[i - 1].value ? out[i - 1].rank : i + 1;
    out.push({ key: kept[i].key, value: kept[i].value, rank });
  }
  return out;
}

/** Rank change (previous − current: positive = moved up towards rank 1), null when either is missing. */
export function rankChange(previous: number | null, current: number | null): number | null {
  return previous === null || current === null ? null : previous - current;
}
