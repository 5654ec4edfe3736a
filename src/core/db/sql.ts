// The one shape both database hosts are reached through: PGlite in this process (a folder, IndexedDB or memory)
// and a PostgreSQL server over the network (the command line's `pg` client). The parts database speaks plain
// SQL through it, so the same statements run on both.

export interface SqlResult<T> {
  readonly rows: T[];
  /** Rows an INSERT, UPDATE or DELETE touched. */
  readonly affected: number;
}

export interface Sql {
  query<T = Record<string, unknown>>(text: string, params?: readonly unknown[]): Promise<SqlResult<T>>;
  /** Several statements without parameters (a migration). */
  exec(text: string): Promise<void>;
  /** Runs `fn` in one transaction: committed when it resolves, rolled back when it throws (or the process dies). */
  transaction<T>(fn: (tx: Sql) => Promise<T>): Promise<T>;
  close(): Promise<void>;
  /** Where the data lives, for messages: "the folder runs/library.db", "postgres://…@host/db". */
  readonly where: string;
  /** True when several processes may use the database at once (a server). */
  readonly shared: boolean;
}

/** pgvector's text form of a vector: "[0.1,0.2,…]". Float32 values print exactly, so they read back bit for bit. */
export function vectorLiteral(v: ArrayLike<number>): string {
  let s = '[';
  for (let i = 0; i < v.length; i++) s += (i ? ',' : '') + v[i];
  return s + ']';
}

/** A float32 array's bytes for a bytea column (little-endian, as every platform we run on). */
export const floatBytes = (a: Float32Array): Uint8Array => new Uint8Array(a.buffer, a.byteOffset, a.byteLength);

/** A bytea column back to float32 values (copied: the driver's bytes may not sit on a 4-byte boundary). */
export function bytesFloats(b: Uint8Array): Float32Array {
  if (b.byteLength % 4 !== 0) throw new RangeError(`a float32 column of ${b.byteLength} bytes`);
  const out = new Float32Array(b.byteLength / 4);
  new Uint8Array(out.buffer).set(b);
  return out;
}
