/** Small sorting and ranking helpers shared by the trend tests. */

/** Sizes of the groups of equal values (only groups of 2 or more), for tie corrections. */
export function tieGroupSizes(values: ArrayLike<number>): number[] {
  const sorted = Float64Array.from(values).sort();
  const out: number[] = [];
  let run = 1;
  for (let i = 1; i <= sorted.length; i++) {
    if (i < sorted.length && sorted[i] === sorted[i - 1]) run++;
    else {
      if (run > 1) out.push(run);
      run = 1;
    }
  }
  return out;
}

/** Ranks 1..n with ties given their average rank (the "average" method). */
export function averageRanks(values: ArrayLike<number>): Float64Array {
  const n = values.length;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => values[a] - values[b]);
  const ranks = new Float64Array(n);
  let i = 0;
  while (i < n) {
    let j = i;
    while (j + 1 < n && values[order[j + 1]] === values[order[i]]) j++;
    const r = (i + j) / 2 + 1;
    for (let k = i; k <= j; k++) ranks[order[k]] = r;
    i = j + 1;
  }
  return ranks;
}

/** Median of a sorted array (mean of the middle two for an even length). */
export function sortedMedian(sorted: ArrayLike<number>): number {
  const n = sorted.length;
  const h = n >> 1;
  return n % 2 === 1 ? sorted[h] : (sorted[h - 1] + sorted[h]) / 2;
}

/** Round half to even (banker's rounding), as NumPy's `round` does. */
export function roundHalfEven(x: number): number {
  const f = Math.floor(x);
  const d = x - f;
  if (d > 0.5) return f + 1;
  if (d < 0.5) return f;
  return f % 2 === 0 ? f : f + 1;
}
