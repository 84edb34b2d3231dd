/**
 * The step kinds a pool thread runs (the parallel ones), each module loaded when a thread first
 * gets a job of its kind. A thread that grows folds' forests so never loads the file readers,
 * arquero or the steps it will not run, which took a few tenths of a second of CPU at every
 * thread's start. test/steps/pool-kinds.test.ts checks this list against the registry.
 *
 * Example: `const def = await poolKinds.get('fit')!()`
 */
import type { StepDefinition } from '../core/step-types.js';

type AnyStep = StepDefinition<never, unknown>;

export const poolKinds: ReadonlyMap<string, () => Promise<AnyStep>> = new Map<string, () => Promise<AnyStep>>([
  ['cv_fold', async () => (await import('./cross-validate.js')).cvFold as AnyStep],
  ['fit', async () => (await import('./fit.js')).fit as AnyStep],
  ['interval_fold', async () => (await import('./interval-fold.js')).intervalFold as AnyStep],
  ['explain', async () => (await import('./explain.js')).explain as AnyStep],
]);
