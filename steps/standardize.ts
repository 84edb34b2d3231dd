import { mean, presentValues } from './column-stats.js';
import { listedColumns } from '../core/step-types.js';
import type { LearnedFeature } from './design.js';
import { numberColumns } from './impute.js';

export interface StandardizeParams {
  columns: string[];
}

/**
 * Centres and scales number predictors by the mean and sample standard deviation of the training
 * rows' present values (an impute step fills missing ones when the matrix is built, not before this
 * is learned); a constant column keeps a scale of 1. Learned inside each fold and in the final fit.
 *
 * Example: `standardize: {columns: [air_temp]}` turns air_temp into (air_temp − mean) / sd.
 */
export const standardize: LearnedFeature<StandardizeParams> = {
  kind: 'standardize',
  learn(params, frame, rows, design) {
    for (const c of params.columns) {
      const v = presentValues(frame, c, rows);
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
      properties: { columns: { $ref: '#/definitions/columnList' } },
    },
    normalize: (v) => ({ columns: (v as { columns: string[] }).columns.map(String) }),
    shape: (p) => ({ columns: p.columns }),
    describe: (p) => p.columns.join(', '),
    reads: (p) => listedColumns(p.columns),
    check: (p, types, label) => numberColumns(p.columns, types, label, 'standardize'),
  },
};
