/** The learned feature kinds called directly: what each learns from the rows it is given, and its recipe contract. */
import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import { DendrologError, messages } from '../../core/messages.js';
import { dict } from '../../core/dict.js';
import { applyDesign, learnDesign, type LearnedDesign } from '../../steps/design.js';
import { impute } from '../../steps/impute.js';
import { DEFAULT_MAX_LEVELS, oneHot } from '../../steps/one-hot.js';
import { standardize } from '../../steps/standardize.js';

/** x has a missing value at row 2; rows 0–3 are "training", row 4 is a far-off test row. */
const frame: Frame = {
  rows: 5,
  columns: [
    { name: 'x', type: 'number', values: Float64Array.from([1, 2, NaN, 6, 1000]) },
    { name: 'land', type: 'category', values: ['farm', 'forest', 'farm', null, 'city'] },
  ],
};
const TRAIN = [0, 1, 2, 3];
const empty = (): LearnedDesign => ({ predictors: [], names: [], impute: dict(), standardize: dict(), oneHot: dict() });

describe('impute', () => {
  it('learns the median (or the mean) of the present training values only', () => {
    const d = empty();
    impute.learn({ columns: ['x'], with: 'median' }, frame, TRAIN, d);
    expect(d.impute.x).toBe(2); // median of 1, 2, 6; row 4's 1000 is not a training row
    impute.learn({ columns: ['x'], with: 'mean' }, frame, TRAIN, d);
    expect(d.impute.x).toBe(3);
  });

  it('fills with median by default and refuses a column that is not a number', () => {
    expect(impute.recipe.normalize({ columns: ['x'] })).toEqual({ columns: ['x'], with: 'median' });
    expect(impute.recipe.check!({ columns: ['x', 'land'], with: 'median' }, new Map([['x', 'number'], ['land', 'category']]), 'features[0] (impute)')).toEqual([
      { at: ['columns', 1], message: messages.schemaOther('features[0] (impute)', 'column "land" is category, but impute needs a number column') },
    ]);
  });
});

describe('standardize', () => {
  it('learns mean and sample sd of the present training values when nothing fills the gap', () => {
    const d = empty();
    standardize.learn({ columns: ['x'] }, frame, TRAIN, d);
    // the missing row is skipped, so the values are 1, 2, 6: mean 3, sd √7 (n − 1 = 2)
    expect(d.standardize.x.mean).toBe(3);
    expect(d.standardize.x.sd).toBeCloseTo(Math.sqrt(7), 12);
  });

  it('learns on the values the model sees when an impute step fills the gap', () => {
    const d = empty();
    impute.learn({ columns: ['x'], with: 'median' }, frame, TRAIN, d);
    standardize.learn({ columns: ['x'] }, frame, TRAIN, d);
    // the median 2 fills row 2: values 1, 2, 2, 6, mean 11/4, squared deviations 14.75 over n − 1 = 3
    expect(d.standardize.x.mean).toBe(2.75);
    expect(d.standardize.x.sd).toBeCloseTo(Math.sqrt(14.75 / 3), 12);
  });

  it('keeps a scale of 1 for a constant column', () => {
    const d = empty();
    standardize.learn({ columns: ['x'] }, frame, [0, 0], d);
    expect(d.standardize.x).toEqual({ mean: 1, sd: 1 });
  });
});

describe('one_hot', () => {
  it('learns the sorted categories of the training rows, and encodes its column for the models', () => {
    const d = empty();
    oneHot.learn({ column: 'land', unseen: 'other', max_levels: 10 }, frame, TRAIN, d);
    expect(d.oneHot.land).toEqual({ categories: ['farm', 'forest'], unseen: 'other' });
    expect(oneHot.recipe.encodes!({ column: 'land', unseen: 'other', max_levels: 10 })).toEqual(['land']);
    expect(oneHot.recipe.normalize({ column: 'land' })).toEqual({ column: 'land', unseen: 'error', max_levels: DEFAULT_MAX_LEVELS });
  });

  it('stops when the training rows hold more categories than max_levels', () => {
    const d = empty();
    let e: unknown;
    try {
      oneHot.learn({ column: 'land', unseen: 'error', max_levels: 1 }, frame, TRAIN, d);
    } catch (err) {
      e = err;
    }
    expect(e).toBeInstanceOf(DendrologError);
    expect((e as DendrologError).message).toBe(messages.tooManyLevels('land', 2, 1));
  });
});

describe('learnDesign', () => {
  it('learns fills before scales whatever the recipe order, as the matrix applies them', () => {
    const impute = { kind: 'impute', columns: ['x'], with: 'median' };
    const scale = { kind: 'standardize', columns: ['x'] };
    const after = learnDesign(frame, TRAIN, [impute, scale], ['x']);
    const before = learnDesign(frame, TRAIN, [scale, impute], ['x']);
    expect(before.standardize.x).toEqual(after.standardize.x);
    expect(after.standardize.x.mean).toBe(2.75);
  });

  it('runs the learned kinds in recipe order and passes derive over', () => {
    const steps = [
      { kind: 'derive', columns: { y: 'd.x * 2' } },
      { kind: 'impute', columns: ['x'], with: 'median' },
      { kind: 'one_hot', column: 'land', unseen: 'other', max_levels: 10 },
    ];
    const d = learnDesign(frame, TRAIN, steps, ['x', 'land']);
    expect(d.names).toEqual(['x', 'land=farm', 'land=forest', 'land=(other)']);
    const m = applyDesign(d, frame, [2, 4]);
    // row 2: x filled with 2, land farm; row 4: x as it is, land city is unseen → (other)
    expect(m.columns.map((c) => Array.from(c))).toEqual([[2, 1000], [1, 0], [0, 0], [0, 1]]);
  });
});
