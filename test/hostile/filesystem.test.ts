/** The file system refusing a write is the machine's state, not a bug: one line, the path, what to do. */
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { expectOutcome, scenario } from './harness.js';

describe('file-system refusals', () => {
  it('name the path and the reason when --out is a name longer than the file system allows', async () => {
    const s = scenario();
    const long = 'a'.repeat(300);
    const r = await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1', '--out', join(s.dir, long, 'run')], {
      code: 1,
      err: /the file system refused to \w+ it \(ENAMETOOLONG: the path is too long; use a shorter one\); nothing was lost/,
    });
    expect(r.err.trimEnd().split('\n')).toHaveLength(1);
    expect(r.err).toContain(long);
  });
});
