// The command line's import threads: a file that outlasts its time limit is reported and its thread replaced, and
// the files after it are still read, in file order.

import { statSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ImportPool, type ThreadResult } from '../../src/cli/import-pool';

const DEMO = 'demo-shapes';
const STEP = 'test/fixtures/kicad/LED_D20.0mm.step';

describe('import threads: time limits', () => {
  it('a file over its time limit is stopped and reported; the next files are read by a fresh thread', async () => {
    const files = [
      join(DEMO, 'angle', 'BC13-544A.stl'),
      STEP, // given 1 ms below: OpenCascade takes far longer to tessellate it
      join(DEMO, 'washer', 'BC01-100A.stl'),
    ].map((path) => ({ path, name: path, bytes: statSync(path).size }));
    const pool = new ImportPool({
      threads: 1,
      sampling: { points: 64, seed: 0 },
      maxBytes: 2 ** 28,
      limitMs: (bytes) => (bytes === files[1].bytes ? 1 : 60_000),
    });
    const seen: [number, ThreadResult][] = [];
    try {
      await pool.run(files, (i, r) => seen.push([i, r]));
      // The pool is kept: a second run reads again with the replaced thread.
      await pool.run([files[2]], (i, r) => seen.push([10 + i, r]));
    } finally {
      await pool.close();
    }
    expect(seen.map(([i]) => i)).toEqual([0, 1, 2, 10]);
    expect(seen.map(([, r]) => r.kind)).toEqual(['part', 'failed', 'part', 'part']);
    const failed = seen[1][1] as Extract<ThreadResult, { kind: 'failed' }>;
    expect(failed.failure).toMatchObject({ file: STEP, code: 'timed-out' });
    expect(failed.failure.reason).toMatch(/^reading took longer than \d+(\.\d)? s and was stopped$/);
  }, 120_000);
});
