/**
 * Sample quantiles, Hyndman & Fan (1996, Am. Stat. 50:361-365) type 7 — the
 * default of R's quantile() and NumPy's 'linear' method — and its weighted
 * generalisation used for coverage-fraction statistics.
 */

/**
 * Linear interpolation the way NumPy's `_lerp` does it (from memory): from
 * the upper end when t >= 0.5, so results stay within [a, b] and match
 * numpy.quantile to the last bit.
 */
export function lerp(a: number, b: number, t: number): number {
  const diff = b - a;
  // both ends computed, one kept: V8 then never meets an untried operation in optimised code
  // that inlined this (it threw unitRunQuantiles' code away once a `zonal` run, --trace-deopt)
  const fromLower = a + diff * t, fromUpper = b - diff * (1 - t);
  return t >= 0.5 ? fromUpper : fromLower;
}

/**
 * Type-7 quantile of an ascending-sorted array: h = (n - 1) p (0-based),
 * Q = x[floor h] + (h - floor h) (x[floor h + 1] - x[floor h]) (Hyndman & Fan 1996, type 7).
 *
 * @param sorted ascending values; only the first `n` are used
 * @param p probability in [0, 1]
 * @example type7Sorted(Float64Array.of(1,2,3,4,5,6,7,8,9,10), 10, 0.25) // 3.25
 */
export function type7Sorted(sorted: ArrayLike<number>, n: number, p: number): number {
  if (n <= 0) return NaN;
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  if (lo >= n - 1) return sorted[n - 1];
  if (lo < 0) return sorted[0];
  return lerp(sorted[lo], sorted[lo + 1], h - lo);
}

/**
 * Weighted type-7 quantiles over runs of equal values.
 *
 * Definition (ours; it reduces exactly to type 7 when every weight is 1):
 * distinct values v_1 < ... < v_m, run j holding n_j cells of total weight
 * W_j. Each cell of run j is given the run's mean weight w_j = W_j / n_j (so
 * the result does not depend on how tied cells are ordered) and sits at the
 * midpoint of its weight interval on the cumulative-weight axis. The first
 * cell of run j is at A_j = S_(j-1) + w_j/2, the last at B_j = S_j - w_j/2
 * (S_j = W_1 + ... + W_j). With t = A_1 + p (B_m - A_1): Q = v_j for
 * A_j <= t <= B_j, and linear between v_j and v_(j+1) for B_j < t < A_(j+1).
 * With unit weights A_j - A_1 = C_(j-1) and B_j - A_1 = C_j - 1 (C = cumulative
 * counts), which is type 7's h = (n - 1) p on 0-based ranks. The rule is
 * symmetric: reversing the order maps p to 1 - p, as type 7 does.
 *
 * @param values ascending distinct run values
 * @param counts cells per run (> 0)
 * @param weights weight sum per run (> 0)
 * @param m number of runs
 * @param ps probabilities in [0, 1]
 * @returns one quantile per entry of ps (NaN when m = 0)
 */
export function runQuantiles(
  values: ArrayLike<number>,
  counts: ArrayLike<number>,
  weights: ArrayLike<number>,
  m: number,
  ps: readonly number[],
): number[] {
  if (m === 0) return ps.map(() => NaN);
  if (m === 1) return ps.map(() => values[0]);
  const half1 = weights[0] / counts[0] / 2;
  let total = 0;
  for (let j = 0; j < m; j++) total += weights[j];
  // Length of the axis from A_1 to B_m.
  const L = total - weights[m - 1] / counts[m - 1] / 2 - half1;
  // One walk along the runs for all probabilities: positions t in ascending
  // order, each settled at the first run whose test it passes (the tests are
  // monotone in t, and A, S, B are computed as a walk per probability would).
  const ts = ps.map((p) => p * L);
  const order = ts.map((_, i) => i).sort((a, b) => {
    const x = ts[a], y = ts[b];
    if (x !== x || y !== y) return x !== x && y !== y ? a - b : x !== x ? 1 : -1; // NaN (p = NaN) last: never settled
    return x < y ? -1 : x > y ? 1 : a - b;
  });
  const out: number[] = new Array(ps.length);
  let next = 0;
  let before = 0; // S_(j-1)
  let prevB = 0; // B_(j-1) - A_1
  for (let j = 0; j < m && next < order.length; j++) {
    const halfJ = weights[j] / counts[j] / 2;
    const A = before - half1 + halfJ;
    const S = before + weights[j];
    const B = S - halfJ - half1;
    while (next < order.length) {
      const t = ts[order[next]];
      if (t < A && j > 0) out[order[next++]] = lerp(values[j - 1], values[j], (t - prevB) / (A - prevB));
      else if (t <= B) out[order[next++]] = values[j];
      else break;
    }
    before = S;
    prevB = B;
  }
  while (next < order.length) out[order[next++]] = values[m - 1];
  return out;
}

/**
 * {@link runQuantiles} for unit weights (every weight equal to its run's
 * count), in whole numbers: with w_j = 1 the midpoints are A_j = C_(j-1) and
 * B_j = C_j - 1 (C = cumulative counts), the axis length is n - 1 and each
 * gap between runs is exactly 1 long, so the general formulas reduce to these
 * integer ones without any rounding; the results are the same numbers.
 *
 * @param values ascending distinct run values
 * @param counts cells per run (whole numbers > 0; sums stay exact below 2^53)
 * @param m number of runs
 * @param ps probabilities in [0, 1]
 * @returns one quantile per entry of ps (NaN when m = 0)
 */
export function unitRunQuantiles(values: ArrayLike<number>, counts: ArrayLike<number>, m: number, ps: readonly number[]): number[] {
  if (m === 0) return ps.map(() => NaN);
  if (m === 1) return ps.map(() => values[0]);
  let total = 0;
  for (let j = 0; j < m; j++) total += counts[j];
  const L = total - 1;
  // Typed arrays throughout: their maps never change, so the optimised walk is not
  // thrown away when an array's element kind would change (it was, up to four times a
  // `zonal` run, at ~8 ms of compiling each).
  const k = ps.length;
  const ts = new Float64Array(k);
  for (let i = 0; i < k; i++) ts[i] = ps[i] * L;
  const order = ascendingOrder(ts);
  const out = new Float64Array(k);
  walkUnitRuns(values, counts, m, ts, order, out);
  return Array.from(out);
}

/** Indices of `ts` by ascending value, NaN last, ties by index (insertion sort: a few probabilities). */
function ascendingOrder(ts: Float64Array): Int32Array {
  const order = new Int32Array(ts.length);
  for (let i = 0; i < ts.length; i++) {
    let j = i;
    while (j > 0 && rankedBefore(ts, i, order[j - 1])) { order[j] = order[j - 1]; j--; }
    order[j] = i;
  }
  return order;
}

/**
 * Whether ts[a] goes before ts[b] (NaN last, ties by index). A function of its own, not a
 * closure made per call: V8 optimised unitRunQuantiles with a fresh closure inlined that had
 * no type feedback yet and threw the code away at its first call (a recompile of ~3 ms in a
 * one-scene `zonal` run, --trace-deopt).
 */
function rankedBefore(ts: Float64Array, a: number, b: number): boolean {
  const x = ts[a], y = ts[b];
  if (x !== x || y !== y) return x !== x && y !== y ? a < b : y !== y;
  return x < y || (x === y && a < b);
}

/** unitRunQuantiles' walk over the runs: out[order[i]] for each rank position ts[order[i]], in ascending order. */
function walkUnitRuns(values: ArrayLike<number>, counts: ArrayLike<number>, m: number, ts: Float64Array, order: Int32Array, out: Float64Array): void {
  let next = 0;
  let before = 0; // C_(j-1) = A_j; B_(j-1) = before - 1
  for (let j = 0; j < m && next < order.length; j++) {
    const S = before + counts[j];
    while (next < order.length) {
      const t = ts[order[next]];
      // Every comparison and the interpolation made on every pass, used or not: an operation
      // first met after V8 had optimised this loop threw the optimised code away (two
      // recompiles in a one-scene `zonal` run, --trace-deopt).
      const between = (t < before ? 1 : 0) & (j > 0 ? 1 : 0);
      const inRun = t <= S - 1 ? 1 : 0;
      if ((between | inRun) === 0) break;
      const interpolated = lerp(values[j > 0 ? j - 1 : j], values[j], t - (before - 1));
      out[order[next]] = between === 1 ? interpolated : values[j];
      next++;
    }
    before = S;
  }
  while (next < order.length) out[order[next++]] = values[m - 1];
}
