/** The derive step called directly: computed columns, non-finite results, refused expressions. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { messages } from '../../core/messages.js';
import type { FrameOutput } from '../../core/step-types.js';
import { derive } from '../../steps/derive.js';
import { asOutput, errorOf, stepContext } from '../helpers.js';

/** x: 1, 4, 0.25 (all present: missing inputs are not what these tests are about); s and t: text. */
const frame: Frame = {
  rows: 3,
  columns: [
    { name: 'x', type: 'number', values: Float64Array.from([1, 4, 0.25]) },
    { name: 's', type: 'string', values: ['a', 'b', 'c'] },
    { name: 't', type: 'string', values: ['1', '2', '3'] },
  ],
};

async function run(columns: Record<string, string>, warnings: string[] = []): Promise<FrameOutput> {
  return (await derive.run([asOutput(frame)], { columns }, stepContext(warnings))) as FrameOutput;
}

const values = (out: FrameOutput, name: string) => Array.from(out.frame.columns.find((c) => c.name === name)!.values as ArrayLike<unknown>);

describe('derive', () => {
  it('adds each column computed row by row, after the input columns', async () => {
    const warnings: string[] = [];
    const out = await run({ double: 'd.x * 2', root: 'op.sqrt(d.x)', tag: "d.s + '-' + d.t" }, warnings);
    expect(out.frame.columns.map((c) => [c.name, c.type])).toEqual([
      ['x', 'number'],
      ['s', 'string'],
      ['t', 'string'],
      ['double', 'number'],
      ['root', 'number'],
      ['tag', 'string'],
    ]);
    // 2·x and √x of 1, 4, 0.25, all exact in binary floating point
    expect(values(out, 'double')).toEqual([2, 8, 0.5]);
    expect(values(out, 'root')).toEqual([1, 2, 0.5]);
    expect(values(out, 'tag')).toEqual(['a-1', 'b-2', 'c-3']);
    expect(out.notes).toMatchObject({ rowsIn: 3, rowsOut: 3 });
    expect({ ...out.notes.changed }).toEqual({});
    expect(out.notes.detail).toBe("derived double = d.x * 2; root = op.sqrt(d.x); tag = d.s + '-' + d.t");
    expect(warnings).toEqual([]);
  });

  it('turns non-finite results into missing values, counts them and warns', async () => {
    const warnings: string[] = [];
    // log(x − 1): log 0 = −∞ (row 0), log 3 (row 1), log(−0.75) = NaN (row 2): two non-finite values
    const out = await run({ l: 'op.log(d.x - 1)' }, warnings);
    expect(values(out, 'l')).toEqual([NaN, Math.log(3), NaN]);
    expect({ ...out.notes.changed }).toEqual({ l: 2 });
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatch(/^derive-non-finite: derived column "l" = op\.log\(d\.x - 1\) gave 2 non-finite values/);
  });

  it('refuses an aggregate, which would read holdout rows, before evaluating anything', async () => {
    const expr = 'd.x - op.mean(d.x)';
    const e = await errorOf(() => run({ ok: 'd.x', centred: expr }));
    // a bare step context has no recipe position: the message is the step, the column and the rule
    expect([e.message, e.exitCode]).toEqual([`derive, column "centred": ${messages.expressionWholeTable(expr, 'mean', 'aggregate')}`, 2]);
  });

  it('refuses a value that changes from run to run', async () => {
    const e = await errorOf(() => run({ r: 'op.random()' }));
    expect([e.message, e.exitCode]).toEqual([`derive, column "r": ${messages.expressionNotRepeatable('op.random()', 'random')}`, 2]);
  });

  it('refuses an expression that gives a list instead of a value, naming the row', async () => {
    const expr = "op.match(d.s, /([a-z])/)";
    const e = await errorOf(() => run({ m: expr }));
    // row 1 (counted from 1) is the first that gives a list
    expect([e.message, e.exitCode]).toEqual([messages.expressionNotAValue('derive, column "m"', expr, 'a list', 1), 1]);
  });
});
