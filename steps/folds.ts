import { DendrologError, messages } from '../runner/messages.js';
import { shuffle } from '../runner/rng.js';
import type { FrameOutput, StepDefinition } from '../runner/step-types.js';
import type { HoldoutOutput } from './holdout.js';
import { rowsByGroup } from './split-util.js';

export interface FoldsParams {
  k: number;
  by: 'random' | 'groups';
  groups: string | null;
}

/** For each training row (in the holdout's train order), the fold it is tested in. */
export interface FoldsOutput {
  k: number;
  by: 'random' | 'groups';
  fold: number[];
}

/**
 * Assigns training rows to k folds for the inner cross-validation that chooses grid cells. By groups,
 * each group lands in exactly one fold (largest groups first, each to the currently smallest fold).
 */
export const folds: StepDefinition<FoldsParams, FoldsOutput> = {
  kind: 'folds',
  version: 1,
  codec: 'json',
  usesSeed: true,
  run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const rand = ctx.rng('folds');
    const position = new Map(split.train.map((r, k) => [r, k] as const));
    const fold = new Array<number>(split.train.length).fill(0);
    if (split.train.length < params.k * 2) {
      throw new DendrologError(messages.tooFewRows(split.train.length, params.k * 2, `${params.k} folds`), 1);
    }
    if (params.by === 'groups' && params.groups) {
      const groups = shuffle([...rowsByGroup(frame, params.groups, split.train).values()], rand);
      if (groups.length < params.k) {
        throw new DendrologError(messages.tooFewRows(groups.length, params.k, `grouped folds (counting groups, not rows)`), 1);
      }
      // stable sort keeps the shuffled order among equal sizes
      groups.sort((a, b) => b.length - a.length);
      const sizes = new Array<number>(params.k).fill(0);
      for (const rows of groups) {
        let f = 0;
        for (let j = 1; j < params.k; j++) if (sizes[j] < sizes[f]) f = j;
        sizes[f] += rows.length;
        for (const r of rows) fold[position.get(r)!] = f;
      }
    } else {
      const order = shuffle(Array.from({ length: split.train.length }, (_, i) => i), rand);
      order.forEach((pos, n) => (fold[pos] = n % params.k));
    }
    return { k: params.k, by: params.by, fold };
  },
  summary: (o) => `${o.k} folds by ${o.by}`,
};
