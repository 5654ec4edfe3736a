// Exact top-k by partial selection: a size-k min-heap over the scores, O(n log k), never a full sort.

export interface Hit {
  readonly index: number;
  readonly score: number;
}

/** The k highest scores of `scores` (ties broken by lower index), best first. `keep(i)` filters candidates. */
export function topK(scores: ArrayLike<number>, k: number, keep?: (i: number) => boolean): Hit[] {
  if (!(k >= 1) || !Number.isInteger(k)) throw new RangeError(`topK: k must be a whole number ≥ 1, got ${k}`);
  const heapScore = new Float64Array(k);
  const heapIndex = new Int32Array(k);
  let size = 0;
  // "a is worse than b": lower score, or equal score and higher index.
  const worse = (sa: number, ia: number, sb: number, ib: number) => sa < sb || (sa === sb && ia > ib);
  const siftDown = (pos: number) => {
    for (;;) {
      const l = 2 * pos + 1,
        r = l + 1;
      let m = pos;
      if (l < size && worse(heapScore[l], heapIndex[l], heapScore[m], heapIndex[m])) m = l;
      if (r < size && worse(heapScore[r], heapIndex[r], heapScore[m], heapIndex[m])) m = r;
      if (m === pos) return;
      const ts = heapScore[m],
        ti = heapIndex[m];
      heapScore[m] = heapScore[pos];
      heapIndex[m] = heapIndex[pos];
      heapScore[pos] = ts;
      heapIndex[pos] = ti;
      pos = m;
    }
  };
  for (let i = 0; i < scores.length; i++) {
    const s = scores[i];
    if (Number.isNaN(s)) continue;
    if (keep && !keep(i)) continue;
    if (size < k) {
      let pos = size++;
      heapScore[pos] = s;
      heapIndex[pos] = i;
      while (pos > 0) {
        const parent = (pos - 1) >> 1;
        if (!worse(heapScore[pos], heapIndex[pos], heapScore[parent], heapIndex[parent])) break;
        const ts = heapScore[parent],
          ti = heapIndex[parent];
        heapScore[parent] = heapScore[pos];
        heapIndex[parent] = heapIndex[pos];
        heapScore[pos] = ts;
        heapIndex[pos] = ti;
        pos = parent;
      }
    } else if (worse(heapScore[0], heapIndex[0], s, i)) {
      heapScore[0] = s;
      heapIndex[0] = i;
      siftDown(0);
    }
  }
  const out: Hit[] = [];
  for (let j = 0; j < size; j++) out.push({ index: heapIndex[j], score: heapScore[j] });
  return out.sort((a, b) => b.score - a.score || a.index - b.index);
}

/**
 * `topK` without a filter, for long rows scanned whole (the neighbour table's pass over all pairs): once k values
 * are held, a value enters only if it is strictly higher than the lowest held — one comparison for most values,
 * and exact, since a later equal value has the higher index and so loses the tie. NaN never enters. Same hits,
 * same order as `topK(scores, k)`.
 */
export function topKRow(scores: ArrayLike<number>, k: number): Hit[] {
  if (!(k >= 1) || !Number.isInteger(k)) throw new RangeError(`topK: k must be a whole number ≥ 1, got ${k}`);
  const n = scores.length;
  let i = 0;
  const first: number[] = [];
  for (; i < n && first.length < k; i++) if (!Number.isNaN(scores[i])) first.push(i);
  if (first.length < k) return topK(scores, k);
  // A min-heap of the k held (worst at the top: lowest score, then highest index).
  const hs = new Float64Array(k),
    hi = new Int32Array(k);
  const worse = (a: number, b: number) => hs[a] < hs[b] || (hs[a] === hs[b] && hi[a] > hi[b]);
  const swap = (a: number, b: number) => {
    const s = hs[a],
      x = hi[a];
    hs[a] = hs[b];
    hi[a] = hi[b];
    hs[b] = s;
    hi[b] = x;
  };
  const down = (p: number) => {
    for (;;) {
      const l = 2 * p + 1,
        r = l + 1;
      let m = p;
      if (l < k && worse(l, m)) m = l;
      if (r < k && worse(r, m)) m = r;
      if (m === p) return;
      swap(m, p);
      p = m;
    }
  };
  first.forEach((j, c) => {
    hs[c] = scores[j];
    hi[c] = j;
  });
  for (let p = (k >> 1) - 1; p >= 0; p--) down(p);
  let floor = hs[0];
  for (; i < n; i++) {
    const s = scores[i];
    if (!(s > floor)) continue; // the common case: one comparison (NaN fails it too)
    hs[0] = s;
    hi[0] = i;
    down(0);
    floor = hs[0];
  }
  const out: Hit[] = [];
  for (let c = 0; c < k; c++) out.push({ index: hi[c], score: hs[c] });
  return out.sort((a, b) => b.score - a.score || a.index - b.index);
}
