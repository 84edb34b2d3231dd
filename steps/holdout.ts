import { DendrologError, messages } from '../runner/messages.js';
import { shuffle } from '../runner/rng.js';
import type { FrameOutput, StepDefinition } from '../runner/step-types.js';
import { rowsByGroup } from './split-util.js';

export interface HoldoutParams {
  by: 'random' | 'groups';
  fraction: number;
  groups: string | null;
}

/** Row indices (into the model table) of the training and holdout sets, each ascending. */
export interface HoldoutOutput {
  train: number[];
  test: number[];
  by: 'random' | 'groups';
  testGroups: number;
  trainGroups: number;
}

/**
 * Sets aside the final test rows, scored once and never used for choosing. By groups, whole groups
 * go to one side (shuffled with a seeded generator, taken until the fraction of rows is reached).
 */
export const holdout: StepDefinition<HoldoutParams, HoldoutOutput> = {
  kind: 'holdout',
  version: 1,
  codec: 'json',
  usesSeed: true,
  run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const rand = ctx.rng('holdout');
    const wanted = Math.round(params.fraction * frame.rows);
    const isTest = new Uint8Array(frame.rows);
    let testGroups = 0;
    let trainGroups = 0;
    if (params.by === 'groups' && params.groups) {
      const groups = [...rowsByGroup(frame, params.groups).values()];
      shuffle(groups, rand);
      let taken = 0;
      for (const rows of groups) {
        if (taken < wanted) {
          for (const r of rows) isTest[r] = 1;
          taken += rows.length;
          testGroups++;
        } else trainGroups++;
      }
    } else {
      const order = shuffle(Array.from({ length: frame.rows }, (_, i) => i), rand);
      for (let k = 0; k < wanted; k++) isTest[order[k]] = 1;
    }
    const train: number[] = [];
    const test: number[] = [];
    for (let i = 0; i < frame.rows; i++) (isTest[i] ? test : train).push(i);
    if (test.length === 0) throw new DendrologError(messages.holdoutEmpty('holdout'), 2);
    if (train.length === 0) throw new DendrologError(messages.holdoutEmpty('training'), 2);
    return { train, test, by: params.by, testGroups, trainGroups };
  },
  summary: (o) => `${o.train.length.toLocaleString('en')} training rows, ${o.test.length.toLocaleString('en')} holdout rows`,
};
