import { column } from '../core/frame.js';
import { sha256 } from '../core/hash.js';
import { DendrologError, messages } from '../core/messages.js';
import type { SplitBy } from '../core/recipe-types.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { parseValue } from './readers/values.js';
import { DAY_MS, drawOrder, rowIdentities, rowsByGroup, timesOf, unitColumn } from './split-util.js';

/** The columns a row is known by in a split without groups (see rowIdentities): the declared key, else the target and time. */
export function rowKeys(params: { target: string; time: string | null; rowKey?: string[] }): string[] {
  return params.rowKey ?? (params.time ? [params.target, params.time] : [params.target]);
}

/** A row within the gap before a time holdout: on neither side. */
const GAP = 2;

export interface HoldoutParams {
  /** The target: with the time column, what a row is known by in a split without groups. */
  target: string;
  by: SplitBy;
  fraction: number;
  cutoff: string | number | null;
  /** With by: time, rows this close before the cutoff (days for dates) are on neither side. */
  gap: number;
  groups: string | null;
  time: string | null;
  /** The recipe's row_key: what a row is known by instead of its target and time; absent when not declared. */
  rowKey?: string[];
}

/** Row indices (into the model table) of the training and holdout sets, each ascending. */
export interface HoldoutOutput {
  train: number[];
  test: number[];
  by: SplitBy;
  /** Groups on each side (blocks, when split by blocks); 0 without either. */
  testGroups: number;
  trainGroups: number;
  /** With by: time, the first time in the holdout (ms for dates). */
  cutoff: number | null;
  /** With by: time and a gap, the rows left out of both sides because they lie within the gap before the cutoff. */
  gapRows: number;
  /**
   * What the split moved as whole units, so two runs can tell whether their holdouts are the same:
   * groups by name, or rows by a 16-hex digit hash of their key (rowIdentities); the holdout's, sorted.
   */
  units: { kind: 'group' | 'block' | 'row'; holdout: string[]; training: number };
}

/**
 * Sets aside the final test rows, scored once and never used for choosing. A unit's side is a
 * function of the master seed and the unit alone (StepContext.unitDraw): editing a value elsewhere,
 * reordering rows or columns, or a file's line endings move nothing, and adding a unit moves at most
 * a few others. By groups, whole groups go to one side (in the order of their draws, taken until
 * the fraction of rows is reached); by blocks, whole spatial blocks, the same way; at random, rows are the units, known by their target and time.
 * By time, the holdout is every row at or after the cutoff (given, or chosen so that the latest
 * fraction of rows is held out; rows sharing a time stay together).
 */
export const holdout: StepDefinition<HoldoutParams, HoldoutOutput> = {
  kind: 'holdout',
  // 3: each unit's side follows from the seed and the unit alone
  version: 3,
  codec: 'json',
  usesSeed: true,
  run(inputs, params, ctx) {
    const frame = (inputs[0] as FrameOutput).frame;
    const wanted = Math.round(params.fraction * frame.rows);
    // the named units the split moves whole: groups, or spatial blocks; null for rows
    const unitCol = unitColumn(params.by, params.groups);
    // per row: 0 training, 1 holdout, GAP neither
    const isTest = new Uint8Array(frame.rows);
    // what each row is known by without groups, worked out once when needed
    let ids: string[] | null = null;
    const rowIds = () => (ids ??= rowIdentities(frame, Array.from({ length: frame.rows }, (_, i) => i), rowKeys(params)));
    let cutoff: number | null = null;
    if (params.by === 'time' && params.time) {
      const all = Array.from({ length: frame.rows }, (_, i) => i);
      const t = timesOf(frame, params.time, all);
      if (params.cutoff !== null) {
        cutoff = column(frame, params.time).type === 'date' ? (parseValue(String(params.cutoff), 'date', new Set()) as number) : Number(params.cutoff);
      } else {
        const sorted = all.map((i) => t[i]).sort((a, b) => a - b);
        cutoff = sorted[Math.max(0, frame.rows - Math.max(1, wanted))];
      }
      const before = cutoff - params.gap * (column(frame, params.time).type === 'date' ? DAY_MS : 1);
      for (let i = 0; i < frame.rows; i++) isTest[i] = t[i] >= cutoff ? 1 : t[i] >= before ? GAP : 0;
    } else if (unitCol) {
      // whole groups (or blocks), in the order of their own draws, until the fraction of rows is reached
      const groups = [...rowsByGroup(frame, unitCol).entries()];
      let taken = 0;
      for (const k of drawOrder(groups.map(([name]) => name), (id) => ctx.unitDraw('holdout', id))) {
        if (taken >= wanted) break;
        for (const r of groups[k][1]) isTest[r] = 1;
        taken += groups[k][1].length;
      }
    } else {
      // a row's identity is its key, with a rank after it ("…]#1") only where rows share the key
      const shared = params.rowKey ? rowIds().filter((id) => /\]#\d+$/.test(id)).length : 0;
      if (shared > 0) ctx.warn('row-key-not-unique', messages.rowKeyNotUnique(params.rowKey!, shared));
      const order = drawOrder(rowIds(), (id) => ctx.unitDraw('holdout', id));
      for (let k = 0; k < wanted; k++) isTest[order[k]] = 1;
    }
    const train: number[] = [];
    const test: number[] = [];
    let gapRows = 0;
    for (let i = 0; i < frame.rows; i++) {
      if (isTest[i] === GAP) gapRows++;
      else (isTest[i] ? test : train).push(i);
    }
    if (test.length === 0 || train.length === 0) {
      const fix =
        params.by === 'time' && train.length === 0 && gapRows > 0
          ? `the gap of ${params.gap} before the holdout leaves no earlier rows; reduce evaluation.holdout.gap`
          : params.by === 'time' && params.cutoff !== null
          ? `move evaluation.holdout.cutoff (${params.cutoff}) inside the range of the time column`
          : params.by === 'time'
            ? 'the time column has too few distinct times to split; split at random or by groups'
            : 'change evaluation.holdout.fraction';
      throw new DendrologError(messages.holdoutEmpty(test.length === 0 ? 'holdout' : 'training', fix), 2);
    }
    // by blocks, the blocks are what the holdout's groups count
    const countCol = params.by === 'blocks' ? unitCol : params.groups;
    const groupCount = (rows: number[]) => (countCol ? rowsByGroup(frame, countCol, rows).size : 0);
    if (params.by === 'time' && params.groups) {
      // a split in time keeps groups on both sides: the holdout then scores new times of known groups
      // (a random split with groups has its own warning, from the headline)
      const trainGroups = new Set(rowsByGroup(frame, params.groups, train).keys());
      const both = [...rowsByGroup(frame, params.groups, test).keys()].filter((g) => trainGroups.has(g)).length;
      if (both > 0) ctx.warn('holdout-groups-both-sides', messages.holdoutGroupsBothSides(params.by, both, groupCount(test), params.groups));
    }
    const unitsOf = (rows: number[]) => (unitCol ? [...rowsByGroup(frame, unitCol, rows).keys()] : rows.map((r) => sha256(rowIds()[r]).slice(0, 16)));
    const kind = params.by === 'blocks' ? ('block' as const) : unitCol ? ('group' as const) : ('row' as const);
    // the training side is only counted: rows are their own units, so no need to name each
    const units = { kind, holdout: unitsOf(test).sort(), training: unitCol ? rowsByGroup(frame, unitCol, train).size : train.length };
    return { train, test, by: params.by, testGroups: groupCount(test), trainGroups: groupCount(train), cutoff, gapRows, units };
  },
  summary: (o) => `${o.train.length.toLocaleString('en')} training rows, ${o.test.length.toLocaleString('en')} holdout rows`,
};
