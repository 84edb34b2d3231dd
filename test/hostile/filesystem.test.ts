/** The file system refusing a write is the machine's state, not a bug: one line, the path, what to do. */
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { messages } from '../../core/messages.js';
import { expectOutcome, scenario } from './harness.js';

describe('file-system refusals', () => {
  it('refuse an --out name longer than the file system allows, before any work', async () => {
    const s = scenario();
    const long = 'a'.repeat(300);
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1', '--out', join(s.dir, long, 'run')], {
      code: 2,
      err: messages.outputUnwritable(join(s.dir, long, 'run'), 'ENAMETOOLONG'),
    });
    expect(r.err.trimEnd().split('\n')).toHaveLength(1);
    expect(r.out).not.toContain('ran ');
  });

  it('refuse an --out the kernel will not let anyone write (/proc), before any work', async () => {
    const s = scenario();
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1', '--out', '/proc/dendrolog-run'], {
      code: 2,
      err: /^the run folder \/proc\/dendrolog-run cannot be written here \(E[A-Z]+: .*\); give --out a folder you can write, nothing was run\n$/,
    });
    expect(r.out).not.toContain('ran ');
  });
});

describe('a folder given as the recipe', () => {
  it('is named as a folder, with the recipe files it holds', async () => {
    const s = scenario();
    await expectOutcome(s.dir, ['check', s.dir], { code: 2, err: messages.recipeIsFolder(s.dir, ['recipe.yaml']) });
  });
});
