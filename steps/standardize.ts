import { filledValues, mean, presentValues } from './column-stats.js';
import { listedColumns } from '../core/step-types.js';
import type { LearnedFeature } from './design.js';
import { numberColumns } from './impute.js';

export interface StandardizeParams {
  columns: string[];
}

/**
 * Centres and scales number predictors by the mean and sample standard deviation of the training
 * rows' values as the model matrix holds them: with an impute step on the column (anywhere in the
 * features), missing values count as its fill; without one, only present values count. A constant
 * column keeps a scale of 1. Learned inside each fold and in the final fit.
 *
 * Example: `standardize: {columns: [air_temp]}` turns air_temp into (air_temp − mean) / sd.
 */
export const standardize: LearnedFeature<StandardizeParams> = {
  kind: 'standardize',
  // scales after fills (see LearnedFeature.stage)
  stage: 1,
  learn(params, frame, rows, design) {
    for (const c of params.columns) {
      // with an impute step on the column, the model matrix holds the fill where a value is missing
      const fill = design.impute[c];
      const v = fill === undefined || Number.isNaN(fill) ? presentValues(frame, c, rows) : filledValues(frame, c, rows, fill);
      const m = mean(v);
      const sd = Math.sqrt(v.reduce((s, x) => s + (x - m) ** 2, 0) / Math.max(1, v.length - 1));
      design.standardize[c] = { mean: m, sd: sd > 0 ? sd : 1 };
    }
  },
  recipe: {
    section: 'features',
    schema: {
      type: 'object',
      additionalProperties: false,
      required: ['columns'],
      description:
        'Centres and scales number predictors by the mean and standard deviation of the training rows, learned inside each fold and in the final fit.',
      properties: { columns: { $ref: '#/definitions/columnList', description: 'The number columns to standardize; each must be one of the predictors.' } },
    },
    normalize: (v) => ({ columns: (v as { columns: string[] }).columns.map(String) }),
    shape: (p) => ({ columns: p.columns }),
    describe: (p) => p.columns.join(', '),
    reads: (p) => listedColumns(p.columns),
    check: (p, types, label) => numberColumns(p.columns, types, label, 'standardize'),
  },
};
