import { describe, expect, it } from 'vitest';
import { main } from '../runner/cli.js';

describe('cli', () => {
  it('returns an exit code', async () => {
    expect(typeof (await main([]))).toBe('number');
  });
});
