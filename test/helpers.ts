import { mkdtempSync, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';

const made: string[] = [];

/** Removes every folder makeFolder made (test/setup.ts calls it after each test file). */
export function removeFolders(): void {
  for (const dir of made.splice(0)) rmSync(dir, { recursive: true, force: true });
}

/** A temporary folder holding the given files (paths relative to it), removed when the tests end. */
export function makeFolder(files: Record<string, string>): string {
  const dir = mkdtempSync(join(tmpdir(), 'dendrolog-test-'));
  made.push(dir);
  for (const [name, text] of Object.entries(files)) {
    mkdirSync(dirname(join(dir, name)), { recursive: true });
    writeFileSync(join(dir, name), text);
  }
  return dir;
}

/** A small valid recipe over data/obs.csv (x1, x2, site, y), with optional extra text appended. */
export const SMALL_RECIPE = `dendrolog: 1
name: small
seed: 3
sources:
  obs:
    file: data/obs.csv
    columns: {site: string, x1: number, x2: number, y: number}
target: y
predictors: [x1, x2]
groups: site
models:
  linear: {kind: linear}
  mean: {kind: mean}
evaluation:
  folds: {k: 3}
`;

/** Data for SMALL_RECIPE: y = 2 x1 - x2 + a small site offset, 12 sites × 5 rows. */
export function smallData(): string {
  const lines = ['site,x1,x2,y'];
  for (let s = 0; s < 12; s++) {
    for (let r = 0; r < 5; r++) {
      const x1 = ((s * 7 + r * 3) % 11) / 2;
      const x2 = ((s * 5 + r * 13) % 17) / 3;
      const y = 2 * x1 - x2 + (s % 3) * 0.1 + r * 0.01;
      lines.push(`S${s},${x1},${x2},${y.toFixed(4)}`);
    }
  }
  return lines.join('\n') + '\n';
}

import type { Frame } from '../core/frame.js';
import { DendrologError } from '../core/messages.js';
import { makeContext, type FrameOutput, type OutputCodec, type StepContext } from '../core/step-types.js';
import { packEntry, unpackEntry } from '../core/codec.js';
import { crossValidate, cvFold, type CrossValidateOutput, type CrossValidateParams, type CvFoldOutput } from '../steps/cross-validate.js';
import type { FoldsOutput } from '../steps/folds.js';
import type { HoldoutOutput } from '../steps/holdout.js';

/** A step context for calling a step directly: seeded, one worker, warnings collected. */
export function stepContext(warnings: string[] = [], seed = 1): StepContext {
  return makeContext({ key: 'test-step', seed, seedKey: 'test-step', locator: {} }, { warn: (code, message) => warnings.push(`${code}: ${message}`), workers: 1 });
}

/** Wraps a frame as a step output. */
/** A step's output as the steps after it see it: through its codec, as the executor hands it on. */
export function decoded<O>(codec: OutputCodec, output: unknown): O {
  return unpackEntry(codec, packEntry(codec, output, [])).output as O;
}

export function asOutput(frame: Frame): FrameOutput {
  return { frame, notes: { rowsIn: frame.rows, rowsOut: frame.rows, detail: '' } };
}

/** The DendrologError a call throws (sync or async); any other error is rethrown. */
export async function errorOf(f: () => unknown): Promise<DendrologError> {
  try {
    await f();
  } catch (e) {
    if (e instanceof DendrologError) return e;
    throw e;
  }
  throw new Error('expected an error');
}

/**
 * One grid cell cross-validated as the plan does it: a cv_fold step per fold, then cross_validate
 * gathering them (inputs: the model table, the holdout and the folds; `params` as cv_fold's without `fold`).
 */
export async function crossValidateCell(
  inputs: [FrameOutput, HoldoutOutput, FoldsOutput],
  params: CrossValidateParams,
  ctx: StepContext = stepContext(),
): Promise<CrossValidateOutput> {
  const parts: CvFoldOutput[] = [];
  for (let fold = 0; fold < inputs[2].k; fold++) parts.push((await cvFold.run(inputs, { ...params, fold }, ctx)) as CvFoldOutput);
  return (await crossValidate.run([inputs[1], inputs[2], ...parts], { cell: params.cell }, ctx)) as CrossValidateOutput;
}

/** A hand-made holdout's units, for tests that do not compare holdouts. */
export const NO_UNITS = { kind: 'row' as const, holdout: [] as string[], training: 0 };
