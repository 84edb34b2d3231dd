import { has } from '../core/dict.js';
import { mean, presentValues } from './column-stats.js';
import type { LearnedFeature } from './design.js';
import { numberColumns } from './impute.js';

export interface StandardizeParams {
  columns: string[];
}

/**
 * Centres and scales number predictors by the training rows' mean and sample standard deviation
 * (missing values filled first where an earlier impute step fills them); a constant column keeps
 * a scale of 1. Learned inside each fold and in the final fit.
 *
 * Example: `standardize: {columns: [air_temp]}` turns air_temp into (air_temp − mean) / sd.
 */
export const standardize: LearnedFeature<StandardizeParams> = {
  kind: 'standardize',
  learn(params, frame, rows, design) {
    for (const c of params.columns) {
      const v = presentValues(frame, c, rows).map((x) => (has(design.impute, c) && Number.isNaN(x) ? design.impute[c] : x));
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
    reads: (p) => p.columns.map((column, k) => ({ column, at: ['columns', k] })),
    check: (p, types, label) => numberColumns(p.columns, types, label, 'standardize'),
  },
};
