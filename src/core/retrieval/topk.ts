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
    // Once k are held, a value enters only if strictly higher than the lowest held (a later equal value has the
    // higher index and loses the tie); one comparison for most values of a long row. NaN fails it too.
    if (size === k && !(s > heapScore[0])) continue;
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
