import { messages } from '../core/messages.js';
import { listedColumns } from '../core/step-types.js';
import { mean, median, presentValues } from './column-stats.js';
import type { LearnedFeature } from './design.js';

export interface ImputeParams {
  columns: string[];
  with: 'mean' | 'median';
}

/**
 * Fills missing values of number predictors with the training rows' median (or mean), learned
 * inside each fold and in the final fit, so no test row informs the value it is filled with.
 *
 * Example: `impute: {columns: [tp], with: median}` fills a missing tp with the median tp of the rows fitted on.
 */
export const impute: LearnedFeature<ImputeParams> = {
  kind: 'impute',
  // fills come first: a scale learns on the filled values
  stage: 0,
  learn(params, frame, rows, design) {
    for (const c of params.columns) {
      const v = presentValues(frame, c, rows);
      design.impute[c] = v.length === 0 ? NaN : params.with === 'mean' ? mean(v) : median(v);
    }
  },
  recipe: {
    section: 'features',
    schema: {
      type: 'object',
      additionalProperties: false,
      required: ['columns'],
      description: 'Fills missing values of number predictors with the median or mean of the training rows, learned inside each fold and in the final fit.',
      properties: {
        columns: { $ref: '#/definitions/columnList', description: 'The number columns to fill; each must be one of the predictors.' },
        with: { enum: ['mean', 'median'], description: 'The statistic of the training rows to fill with: median (default) or mean.' },
      },
    },
    normalize: (v) => {
      const r = v as { columns: string[]; with?: ImputeParams['with'] };
      return { columns: r.columns.map(String), with: r.with ?? 'median' };
    },
    shape: (p) => ({ columns: p.columns, with: p.with }),
    describe: (p) => `${p.columns.join(', ')} by ${p.with}`,
    reads: (p) => listedColumns(p.columns),
    check: (p, types, label) => numberColumns(p.columns, types, label, 'impute'),
  },
};

/** Problems for listed columns that are not number columns (unknown ones are reported by their read). */
export function numberColumns(columns: string[], types: ReadonlyMap<string, string>, label: string, kind: string): { at: (string | number)[]; message: string }[] {
  return columns.flatMap((c, k) => {
    const t = types.get(c);
    return t === undefined || t === 'number' ? [] : [{ at: ['columns', k], message: messages.schemaOther(label, `column "${c}" is ${t}, but ${kind} needs a number column`) }];
  });
}
