import { describe, expect, it } from 'vitest';
import { stepRegistry } from '../../steps/index.js';
import { poolKinds } from '../../steps/pool-kinds.js';

describe('the kinds pool threads load on demand', () => {
  it('are exactly the parallel kinds of the registry, each the same definition', async () => {
    const parallel = Object.values(stepRegistry)
      .filter((d) => d.parallel)
      .map((d) => d.kind)
      .sort();
    expect([...poolKinds.keys()].sort()).toEqual(parallel);
    for (const [kind, load] of poolKinds) expect(await load()).toBe(stepRegistry[kind]);
  });

  it('know no kind by an inherited name', () => {
    expect(poolKinds.get('__proto__')).toBeUndefined();
    expect(poolKinds.get('constructor')).toBeUndefined();
  });
});
