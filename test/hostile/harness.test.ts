import { join } from 'node:path';
import { describe, it } from 'vitest';
import { expectOutcome, scenario } from './harness.js';
import { messages } from '../../core/messages.js';
describe('bad-input harness', () => {
  it('a good run writes only its run folder and the cache', async () => {
    const s = scenario();
    await expectOutcome(s.dir, ['run', s.recipe, '--cache', s.cache, '--workers', '1'], { code: 0, changes: ['out/small/'] });
  });
  it('a missing recipe file exits 2 and changes nothing', async () => {
    const s = scenario();
    await expectOutcome(s.dir, ['run', join(s.dir, 'nope.yaml'), '--cache', s.cache], { code: 2, err: messages.recipeFileMissing(join(s.dir, 'nope.yaml')) });
  });
});
