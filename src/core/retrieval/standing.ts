// A result's standing in the library: the share of the other parts that are less similar to the query than it
// is (the empirical distribution of the query's similarities, strictly below). Readable where cosine is not: an
// untrained encoder scores every part near 1, yet its best result still stands above most of the library.

/**
 * For each of `hits` (indices into `scores`), the share of the other parts whose score is strictly below the hit's;
 * `exclude` (the query itself, when it is in the library) and the hit itself are not counted. O(n log n) once,
 * then O(log n) a hit.
 */
export function shareBelow(scores: ArrayLike<number>, hits: readonly number[], exclude = -1): number[] {
  const sorted = Float64Array.from(
    { length: scores.length - (exclude >= 0 && exclude < scores.length ? 1 : 0) },
    (_, i) => scores[exclude >= 0 && i >= exclude ? i + 1 : i],
  ).sort();
  const others = sorted.length - 1; // every part but the hit (and the query)
  return hits.map((h) => {
    if (others <= 0) return 0;
    const s = scores[h];
    let lo = 0,
      hi = sorted.length; // first index with sorted[i] >= s
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (sorted[mid] < s) lo = mid + 1;
      else hi = mid;
    }
    return lo / others;
  });
}

/** In words: "closer than 97 % of the library" (one decimal above 99 %, so the best results differ). */
export function standingWords(share: number): string {
  const pct = share * 100;
  const shown = pct >= 99 && pct < 100 ? pct.toFixed(1) : Math.floor(pct).toFixed(0);
  return `closer than ${shown} % of the library`;
}
