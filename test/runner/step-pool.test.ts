import { describe, expect, it } from 'vitest';
import { StepPool } from '../../runner/step-pool.js';

describe('StepPool', () => {
  it('refuses a step kind that does not run on pool threads, naming it', async () => {
    const pool = new StepPool(1);
    try {
      await expect(pool.run({ threads: 1, kind: 'source', params: {}, seed: 1, key: 'k', seedKey: 'k', locator: {}, inputs: [] })).rejects.toThrow(
        /step kind source does not run on pool threads/,
      );
    } finally {
      await pool.close();
    }
  });
});
