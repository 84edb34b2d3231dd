import type { StepDefinition } from '../runner/step-types.js';
import { choose } from './choose.js';
import { crossValidate } from './cross-validate.js';
import { derive } from './derive.js';
import { dropMissing } from './drop-missing.js';
import { explain } from './explain.js';
import { fit } from './fit.js';
import { folds } from './folds.js';
import { holdout } from './holdout.js';
import { join } from './join.js';
import { keepRows } from './keep-rows.js';
import { modelTable } from './model-table.js';
import { replace } from './replace.js';
import { score } from './score.js';
import { source } from './source.js';
import { within } from './within.js';

/** Every step kind, by name. Adding a kind: one file in steps/ and one line here. */
export const stepRegistry: Record<string, StepDefinition<never, unknown>> = Object.fromEntries(
  [source, join, replace, dropMissing, keepRows, within, derive, modelTable, holdout, folds, crossValidate, choose, fit, score, explain].map(
    (s) => [s.kind, s as StepDefinition<never, unknown>],
  ),
);
