// Near-duplicate groups: every pair above a similarity threshold joins one cluster (union-find with path
// halving and union by size), reported with the real sizes side by side.

export interface DuplicateGroup {
  readonly members: number[];
  /** The pairs that joined it, with their similarity. */
  readonly pairs: { a: number; b: number; similarity: number }[];
}

export class UnionFind {
  private readonly parent: Int32Array;
  private readonly size: Int32Array;
  constructor(n: number) {
    this.parent = Int32Array.from({ length: n }, (_, i) => i);
    this.size = new Int32Array(n).fill(1);
  }
  find(x: number): number {
    while (this.parent[x] !== x) {
      this.parent[x] = this.parent[this.parent[x]];
      x = this.parent[x];
    }
    return x;
  }
  union(a: number, b: number): void {
    let ra = this.find(a),
      rb = this.find(b);
    if (ra === rb) return;
    if (this.size[ra] < this.size[rb]) [ra, rb] = [rb, ra];
    this.parent[rb] = ra;
    this.size[ra] += this.size[rb];
  }
}

export function duplicateGroups(
  count: number,
  similarity: (i: number, j: number) => number,
  threshold: number,
): DuplicateGroup[] {
  const uf = new UnionFind(count);
  const pairs: { a: number; b: number; similarity: number }[] = [];
  for (let i = 0; i < count; i++) {
    for (let j = i + 1; j < count; j++) {
      const s = similarity(i, j);
      if (s >= threshold) {
        pairs.push({ a: i, b: j, similarity: s });
        uf.union(i, j);
      }
    }
  }
  const groups = new Map<number, DuplicateGroup>();
  for (const p of pairs) {
    const r = uf.find(p.a);
    if (!groups.has(r)) groups.set(r, { members: [], pairs: [] });
    groups.get(r)!.pairs.push(p);
  }
  for (let i = 0; i < count; i++) groups.get(uf.find(i))?.members.push(i);
  return [...groups.values()].sort(
    (a, b) =>
      b.members.length - a.members.length ||
      Math.max(...b.pairs.map((p) => p.similarity)) - Math.max(...a.pairs.map((p) => p.similarity)),
  );
}
