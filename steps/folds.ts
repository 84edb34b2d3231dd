import { column } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { SplitBy } from '../core/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { rowKeys, type HoldoutOutput } from './holdout.js';
import { DAY_MS, drawOrder, rowIdentities, rowsByGroup, timesOf, unitColumn } from './split-util.js';

export interface FoldsParams {
  /** The target: with the time column, what a row is known by in folds without groups. */
  target: string;
  k: number;
  by: SplitBy;
  gap: number;
  groups: string | null;
  time: string | null;
  /** The recipe's row_key, as for the holdout; absent when not declared. */
  rowKey?: string[];
}

/**
 * For each training row (in the holdout's train order), the fold it is tested in; -1 for rows no
 * fold tests (the earliest block of forward time folds).
 */
export interface FoldsOutput {
  k: number;
  by: SplitBy;
  fold: number[];
  /**
   * Forward time folds only: fold f trains on rows whose time is below trainBefore[f] (its test
   * block's first time minus the gap), so no fold ever trains on rows later than its test rows.
   */
  trainBefore?: number[];
}

/**
 * Assigns training rows to k folds for the inner cross-validation that chooses grid cells. A unit's
 * fold follows from the master seed and the units alone (see foldsAlong), as the holdout's side
 * does. By groups (or spatial blocks), each group lands in exactly one fold, folds holding about equal rows; at random,
 * rows are the units, known by their target and time (rowIdentities). By time, the rows are cut into k + 1 consecutive blocks and fold f tests block
 * f + 1 with everything before it (less the gap) as training rows.
 */
export const folds: StepDefinition<FoldsParams, FoldsOutput> = {
  kind: 'folds',
  // 3: each unit's fold follows from the seed and the units alone
  version: 3,
  codec: 'json',
  usesSeed: true,
  run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const split = inputs[1] as HoldoutOutput;
    const position = new Map(split.train.map((r, k) => [r, k] as const));
    const fold = new Array<number>(split.train.length).fill(0);
    if (split.train.length < params.k * 2) {
      const all = split.train.length + split.test.length;
      throw new DendrologError(messages.foldsTooFew(split.train.length, 'rows', split.test.length, all, params.k, params.k * 2), 1);
    }
    if (params.by === 'time' && params.time) {
      const t = timesOf(frame, params.time, split.train);
      const distinct = [...new Set(split.train.map((r) => t[r]))].sort((a, b) => a - b);
      if (distinct.length < params.k + 1) throw new DendrologError(messages.timeTooFewBlocks(distinct.length, params.k), 1);
      // block boundaries on distinct times, so rows sharing a time never straddle a boundary
      const sorted = split.train.map((r) => t[r]).sort((a, b) => a - b);
      const starts: number[] = [];
      for (let b = 1; b <= params.k; b++) {
        let at = sorted[Math.floor((b * sorted.length) / (params.k + 1))];
        if (starts.length && at <= starts[starts.length - 1]) at = distinct.find((d) => d > starts[starts.length - 1])!;
        starts.push(at);
      }
      const unit = column(frame, params.time).type === 'date' ? DAY_MS : 1;
      split.train.forEach((r, k) => {
        let f = -1;
        for (let b = 0; b < starts.length; b++) if (t[r] >= starts[b]) f = b;
        fold[k] = f;
      });
      const trainBefore = starts.map((s) => s - params.gap * unit);
      // a gap wider than the history before a block would leave that fold nothing to learn from
      trainBefore.forEach((limit, b) => {
        if (!(sorted[0] < limit)) throw new DendrologError(messages.timeGapTooLarge(params.gap, unit === DAY_MS ? 'days' : 'time units', b + 1), 1);
      });
      return { k: params.k, by: params.by, fold, trainBefore };
    }
    const draw = (id: string) => ctx.unitDraw('folds', id);
    const unitCol = unitColumn(params.by, params.groups);
    if (unitCol) {
      const groups = [...rowsByGroup(frame, unitCol, split.train).entries()];
      if (groups.length < params.k) {
        const held = params.by === 'blocks' ? rowsByGroup(frame, unitCol, split.test).size : split.testGroups;
        throw new DendrologError(messages.foldsTooFew(groups.length, params.by === 'blocks' ? 'blocks' : 'groups', held, held + groups.length, params.k, params.k), 1);
      }
      const order = drawOrder(groups.map(([name]) => name), draw);
      const of = foldsAlong(order.map((g) => groups[g][1].length), params.k);
      order.forEach((g, rank) => {
        for (const r of groups[g][1]) fold[position.get(r)!] = of[rank];
      });
    } else {
      const order = drawOrder(rowIdentities(frame, split.train, rowKeys(params)), draw);
      const of = foldsAlong(order.map(() => 1), params.k);
      order.forEach((pos, rank) => (fold[pos] = of[rank]));
    }
    return { k: params.k, by: params.by, fold };
  },
  summary: (o) => `${o.k} folds by ${o.by}`,
};

/**
 * The fold of each unit, units given in the order of their draws with their sizes in rows: laid end
 * to end, a unit goes to the k-th part of the line its middle falls in, so folds hold about equal
 * rows and adding a unit moves at most a few others, near the boundaries. When very unequal sizes
 * would leave a fold empty, units are dealt by rank instead (k equal counts of units).
 *
 * Example: `foldsAlong([1, 1, 1, 1, 1, 1], 3)` is `[0, 0, 1, 1, 2, 2]`.
 */
export function foldsAlong(sizes: number[], k: number): number[] {
  const total = sizes.reduce((a, b) => a + b, 0);
  let before = 0;
  const out = sizes.map((size) => {
    const middle = before + size / 2;
    before += size;
    return Math.min(k - 1, Math.floor((middle * k) / total));
  });
  if (new Set(out).size === k) return out;
  return sizes.map((_, rank) => Math.floor((rank * k) / sizes.length));
}

/**
 * Positions (into the holdout's train list) of the rows fold f trains on and tests on.
 *
 * Example: for random folds, `foldRows(out, 0, ...)` trains on every row not in fold 0.
 */
export function foldRows(
  folds: FoldsOutput,
  f: number,
  timeOf: (position: number) => number,
): { fit: number[]; test: number[] } {
  const fit: number[] = [];
  const test: number[] = [];
  folds.fold.forEach((g, k) => {
    if (g === f) test.push(k);
    else if (folds.trainBefore ? timeOf(k) < folds.trainBefore[f] : g !== -1) fit.push(k);
  });
  return { fit, test };
}
