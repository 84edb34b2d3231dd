/**
 * The software fingerprint is part of every step key, so it must change with any file whose code can
 * shape a step's output, and with nothing else (a change to the report's wording must not throw the
 * cache away).
 */
import { appendFileSync, cpSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { codeHashes, OUTPUT_ENTRIES } from '../../runner/environment.js';
import { hashValue } from '../../core/hash.js';
import { packageRoot } from '../../runner/paths.js';
import { makeFolder } from '../helpers.js';

/** A copy of the source folders, and a function giving its fingerprint of code. */
function copyOfSources() {
  const dir = makeFolder({});
  for (const folder of ['core', 'runner', 'steps', 'models']) cpSync(join(packageRoot(), folder), join(dir, folder), { recursive: true });
  return { dir, code: () => hashValue(codeHashes(dir, OUTPUT_ENTRIES)) };
}

describe('software fingerprint', () => {
  it('covers the files that shape outputs outside steps/ and models/: frames, codecs, generators, hashing', () => {
    const files = Object.keys(codeHashes(packageRoot(), OUTPUT_ENTRIES));
    for (const f of ['core/frame.ts', 'core/codec.ts', 'core/rng.ts', 'core/hash.ts', 'core/dict.ts', 'models/forest-worker.ts', 'steps/readers/csv-stream.ts', 'runner/task.ts', 'runner/parts.ts', 'steps/impute.ts']) {
      expect(files).toContain(f);
    }
    // the report, the command line and the run record do not shape step outputs
    // nor does reading and checking a recipe: a new message wording must not throw the cache away
    // (nor does how cluster tasks are submitted: runner/slurm.ts reaches the executor as types only)
    for (const f of ['runner/cli.ts', 'runner/render.ts', 'runner/report-view.ts', 'runner/manifest.ts', 'runner/recipe.ts', 'runner/validate.ts', 'runner/yaml-read.ts', 'runner/slurm.ts']) {
      expect(files).not.toContain(f);
    }
  });

  for (const file of ['core/frame.ts', 'core/codec.ts', 'core/rng.ts', 'models/forest-worker.ts']) {
    it(`changes when ${file} changes`, () => {
      const copy = copyOfSources();
      const before = copy.code();
      appendFileSync(join(copy.dir, file), '\n// edited\n');
      expect(copy.code()).not.toBe(before);
    });
  }

  it('leaves out type-only imports (the compiler erases them), and nothing else', () => {
    const dir = makeFolder({
      'entry.ts': [
        "import type { Shape } from './types-only.js';",
        "export type { Other } from './types-too.js';",
        '// an import type is erased by tsc',
        "import { real } from './real.js';",
        "export type Mode = 'a' | 'b'",
        "import { second } from './second.js';",
        'export const x = [real, second];',
      ].join('\n'),
      'types-only.ts': 'export type Shape = number;',
      'types-too.ts': 'export type Other = string;',
      'real.ts': 'export const real = 1;',
      'second.ts': 'export const second = 2;',
    });
    expect(Object.keys(codeHashes(dir, ['entry']))).toEqual(['entry.ts', 'real.ts', 'second.ts']);
  });

  it('stays the same when only the report rendering changes', () => {
    const copy = copyOfSources();
    const before = copy.code();
    appendFileSync(join(copy.dir, 'runner/render.ts'), '\n// edited\n');
    expect(copy.code()).toBe(before);
  });
});
