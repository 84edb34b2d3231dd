import { describe, expect, it } from 'vitest';
import type { Frame } from '../../core/frame.js';
import type { FeatureStep } from '../../core/recipe-types.js';
import { DendrologError, messages } from '../../core/messages.js';
import { applyDesign, learnDesign } from '../../steps/design.js';
import { folds, type FoldsParams } from '../../steps/folds.js';
import { holdout, type HoldoutOutput, type HoldoutParams } from '../../steps/holdout.js';
import { asOutput, stepContext, NO_UNITS } from '../helpers.js';

const DAY = 86_400_000;

/**
 * 12 sites × 5 rows: site, a date `day` (row r of a site on day (s + r) % days, so `days` distinct
 * days), a numeric predictor x (missing where listed) and a category `kind`.
 */
function frame(opts: { days?: number; missingDay?: number[]; missingX?: number[]; missingKind?: number[] } = {}): Frame {
  const days = opts.days ?? 20;
  const site: string[] = [];
  const day: number[] = [];
  const x: number[] = [];
  const kind: (string | null)[] = [];
  for (let s = 0; s < 12; s++) {
    for (let r = 0; r < 5; r++) {
      const i = site.length;
      site.push(`S${s}`);
      day.push(opts.missingDay?.includes(i) ? NaN : Date.UTC(2021, 0, 1) + ((s + r) % days) * DAY);
      x.push(opts.missingX?.includes(i) ? NaN : (s * 7 + r) % 11);
      kind.push(opts.missingKind?.includes(i) ? null : i % 3 ? 'a' : 'b');
    }
  }
  return {
    rows: site.length,
    columns: [
      { name: 'site', type: 'string', values: site },
      { name: 'day', type: 'date', values: Float64Array.from(day) },
      { name: 'x', type: 'number', values: Float64Array.from(x) },
      { name: 'kind', type: 'category', values: kind },
    ],
  };
}

const HOLDOUT: HoldoutParams = { target: 'y', by: 'random', fraction: 0.2, cutoff: null, gap: 0, groups: 'site', time: 'day' };
const FOLDS: FoldsParams = { target: 'y', k: 4, by: 'random', gap: 0, groups: 'site', time: 'day' };

/** The DendrologError a synchronous call throws. */
function errorOf(f: () => unknown): DendrologError {
  try {
    f();
  } catch (e) {
    if (e instanceof DendrologError) return e;
    throw e;
  }
  throw new Error('expected an error');
}

const split = (f: Frame, params: Partial<HoldoutParams>) => holdout.run([asOutput(f)], { ...HOLDOUT, ...params }, stepContext()) as HoldoutOutput;
const makeFolds = (f: Frame, s: HoldoutOutput, params: Partial<FoldsParams>) => folds.run([asOutput(f), s], { ...FOLDS, ...params }, stepContext());

describe('splitting by time', () => {
  it('stops when the holdout meets rows without a time, counting them', () => {
    const e = errorOf(() => split(frame({ missingDay: [3, 17] }), { by: 'time' }));
    expect([e.message, e.exitCode]).toEqual([messages.timeMissing('day', 2), 1]);
  });

  it('stops when forward folds meet training rows without a time', () => {
    const f = frame({ missingDay: [0, 1, 2] });
    // a random holdout of rows 50 to 59 leaves the three rows without a time in training
    const s: HoldoutOutput = { train: Array.from({ length: 50 }, (_, i) => i), test: Array.from({ length: 10 }, (_, i) => 50 + i), by: 'random', testGroups: 0, trainGroups: 0, cutoff: null, gapRows: 0, units: NO_UNITS };
    const e = errorOf(() => makeFolds(f, s, { by: 'time' }));
    expect([e.message, e.exitCode]).toEqual([messages.timeMissing('day', 3), 1]);
  });

  it('stops when the training rows have fewer distinct times than forward folds need', () => {
    // 3 distinct days; 4 forward folds need 5 blocks
    const f = frame({ days: 3 });
    const s = split(f, { by: 'random' });
    const e = errorOf(() => makeFolds(f, s, { by: 'time', k: 4 }));
    expect([e.message, e.exitCode]).toEqual([messages.timeTooFewBlocks(3, 4), 1]);
  });
});

describe('an empty side of the holdout', () => {
  it('says the holdout is empty when the fraction rounds to no rows', () => {
    // 0.005 × 60 rows rounds to 0
    const e = errorOf(() => split(frame(), { target: 'y', by: 'random', fraction: 0.005 }));
    expect([e.message, e.exitCode]).toEqual([messages.holdoutEmpty('holdout', 'change evaluation.holdout.fraction'), 2]);
    const g = errorOf(() => split(frame(), { target: 'y', by: 'groups', fraction: 0.005 }));
    expect([g.message, g.exitCode]).toEqual([messages.holdoutEmpty('holdout', 'change evaluation.holdout.fraction'), 2]);
  });

  it('says the training set is empty when whole groups fill the holdout, or the cutoff precedes every row', () => {
    // 0.99 × 60 = 59 rows: groups of 5 are taken until 59 are reached, which takes all twelve
    const g = errorOf(() => split(frame(), { target: 'y', by: 'groups', fraction: 0.99 }));
    expect([g.message, g.exitCode]).toEqual([messages.holdoutEmpty('training', 'change evaluation.holdout.fraction'), 2]);
    const t = errorOf(() => split(frame(), { by: 'time', cutoff: '2020-01-01' }));
    expect([t.message, t.exitCode]).toEqual([
      messages.holdoutEmpty('training', 'move evaluation.holdout.cutoff (2020-01-01) inside the range of the time column'),
      2,
    ]);
  });
});

describe('a missing predictor value when building the model matrix', () => {
  const all = Array.from({ length: 60 }, (_, i) => i);

  it('stops on a missing number that no impute step fills, counting the missing values in those rows', () => {
    const f = frame({ missingX: [4, 9, 30] });
    const design = learnDesign(f, all, [], ['x']);
    const e = errorOf(() => applyDesign(design, f, all));
    expect([e.message, e.exitCode]).toEqual([messages.missingInPredictor('x', 3), 1]);
  });

  it('stops when an impute step had no value to learn from the training rows', () => {
    const f = frame({ missingX: [0, 1, 2, 40] });
    const impute: FeatureStep = { kind: 'impute', columns: ['x'], with: 'median' };
    // trained on rows 0 to 2 alone, all missing: the median is undefined
    const design = learnDesign(f, [0, 1, 2], [impute], ['x']);
    const e = errorOf(() => applyDesign(design, f, all));
    expect([e.message, e.exitCode]).toEqual([messages.missingInPredictor('x', 4), 1]);
  });

  it('stops on a missing category of a one-hot encoded predictor', () => {
    const f = frame({ missingKind: [7, 8] });
    const oneHot: FeatureStep = { kind: 'one_hot', column: 'kind', unseen: 'other', max_levels: 1000 };
    const design = learnDesign(f, all, [oneHot], ['kind']);
    const e = errorOf(() => applyDesign(design, f, all));
    expect([e.message, e.exitCode]).toEqual([messages.missingInPredictor('kind', 2), 1]);
  });
});
