// The import-direction rules of eslint.config.js catch what they promise (DEVELOPERS.md, "Architecture"):
// each case lints a one-line file placed in a folder and expects the rule to fire, or not.
import { ESLint } from 'eslint';
import { describe, expect, it } from 'vitest';

const eslint = new ESLint();
async function restricted(filePath: string, code: string): Promise<string[]> {
  const [result] = await eslint.lintText(`${code}\nexport const used = x;\n`, { filePath });
  return result.messages.filter((m) => m.ruleId === '@typescript-eslint/no-restricted-imports').map((m) => m.message);
}

describe('import direction (eslint.config.js)', () => {
  it.each([
    ['src/ui/components/x.ts', "import * as x from '@tensorflow/tfjs';", /never loads tfjs/],
    ['src/ui/components/x.ts', "import { Encoder as x } from '../../core/model/encoder';", /types only/],
    ['src/ui/components/x.ts', "import { computeLoss as x } from '../../core/model/losses';", /losses\/names/],
    ['src/core/model/x.ts', "import { SkApp as x } from '../../ui/components/app';", /does not import them/],
    ['src/core/model/x.ts', "import { readFileSync as x } from 'node:fs';", /no Node modules/],
    ['src/core/points/x.ts', "import { Vector3 as x } from 'three';", /only in its file readers/],
    ['src/worker/x.ts', "import { SkApp as x } from '../ui/components/app';", /import core and render only/],
    ['src/cli/x.ts', "import { SkApp as x } from '../ui/components/app';", /not the workbench/],
    ['src/render/x.ts', "import { SkApp as x } from '../ui/components/app';", /core and three only/],
    ['test/x.test.ts', "import { corpusPart as x } from '../research/corpus';", /research\/ is the lab/],
  ])('%s: %s is refused', async (file, code, message) => {
    const found = await restricted(file, code);
    expect(found.length, `no restriction fired for ${code}`).toBe(1);
    expect(found[0]).toMatch(message);
  });
  it.each([
    ['src/ui/components/x.ts', "import type { Encoder as x } from '../../core/model/encoder';"],
    ['src/ui/components/x.ts', "import { LOSS_NAMES as x } from '../../core/model/losses/names';"],
    ['src/core/mesh/x.ts', "import { STLLoader as x } from 'three/examples/jsm/loaders/STLLoader.js';"],
    ['src/worker/x.ts', "import { Trainer as x } from '../core/model/trainer';"],
    ['src/worker/x.ts', "import { renderThumbnail as x } from '../render/thumbnail';"],
  ])('%s: %s is allowed', async (file, code) => {
    expect(await restricted(file, code)).toEqual([]);
  });
});
