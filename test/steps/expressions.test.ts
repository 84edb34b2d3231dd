import { aggregateFunctions, windowFunctions } from 'arquero/src/op/index.js';
import { describe, expect, it } from 'vitest';
import { DendrologError } from '../../core/messages.js';
import { expressionProblem, withinBudget } from '../../steps/expressions.js';

describe('expressionProblem', () => {
  // the lists are arquero's own registry, so a function arquero adds later is covered too
  const registry: [string, 'aggregate' | 'window'][] = [
    ...Object.keys(aggregateFunctions).map((n): [string, 'aggregate'] => [n, 'aggregate']),
    ...Object.keys(windowFunctions).map((n): [string, 'window'] => [n, 'window']),
  ];

  it('sees arquero register the usual aggregate and window functions', () => {
    const names = registry.map(([n]) => n);
    for (const n of ['mean', 'sum', 'count', 'median', 'max', 'min', 'stdev', 'quantile', 'row_number', 'rank', 'lag', 'lead']) expect(names).toContain(n);
  });

  it('refuses every aggregate and window function in the registry, with its offsets', () => {
    for (const [name, family] of registry) {
      const expr = `d.x + op.${name}(d.x)`;
      expect(expressionProblem(expr), name).toEqual({ kind: 'whole-table', call: { name, family, start: 6, end: expr.length } });
    }
  });

  it('accepts row-wise functions, including Math.max, which arquero rewrites to greatest', () => {
    for (const expr of ['op.abs(d.x) + Math.max(d.x, d.y)', 'op.match(d.s, /a+/) != null', 'd.x > 1 ? op.log(d.x) : null']) {
      expect(expressionProblem(expr), expr).toBeUndefined();
    }
  });

  it('reports a compile problem with the snippet, as arquero does', () => {
    expect(expressionProblem('op.nope(d.x)')).toEqual({ kind: 'compile', detail: 'Invalid function call: "op.nope(d.x)"' });
    expect(expressionProblem('d.x +')).toMatchObject({ kind: 'compile' });
  });
});

describe('withinBudget', () => {
  it('interrupts a synchronous loop and says which step and expression', () => {
    const saved = process.env.DENDROLOG_EXPRESSION_SECONDS;
    process.env.DENDROLOG_EXPRESSION_SECONDS = '0.1';
    try {
      const spin = () => {
        for (;;);
      };
      let error: unknown;
      try {
        withinBudget({ step: 'clean[0] keep_rows', where: 'r.yaml:3:5', expr: 'spin' }, 10, spin);
      } catch (e) {
        error = e;
      }
      expect(error).toBeInstanceOf(DendrologError);
      expect((error as DendrologError).exitCode).toBe(1);
      expect((error as DendrologError).message).toMatch(/^r\.yaml:3:5: clean\[0\] keep_rows: expression "spin" did not finish/);
    } finally {
      if (saved === undefined) delete process.env.DENDROLOG_EXPRESSION_SECONDS;
      else process.env.DENDROLOG_EXPRESSION_SECONDS = saved;
    }
  });

  it('returns the value and leaves errors it did not cause alone', () => {
    expect(withinBudget({ step: 's', expr: 'e' }, 1, () => 42)).toBe(42);
    const own = new DendrologError('own', 2);
    expect(() =>
      withinBudget({ step: 's', expr: 'e' }, 1, () => {
        throw own;
      }),
    ).toThrow(own);
  });
});
