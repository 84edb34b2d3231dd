import { column } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { LearnedFeature } from './design.js';

export interface OneHotParams {
  column: string;
  /** A category training never saw: stop with an error, or count it under an "(other)" indicator. */
  unseen: 'error' | 'other';
  max_levels: number;
}

/**
 * Most categories a one_hot step expands into indicator columns unless the recipe raises it: each
 * level is a column of the model matrix, so a free-text or identifier column would make a matrix
 * too wide to fit (and a level seen once teaches a model nothing).
 */
export const DEFAULT_MAX_LEVELS = 1000;

/**
 * Turns a text or category predictor into one indicator column per category seen in the training
 * rows (learned inside each fold and in the final fit), so the models can use it.
 *
 * Example: `one_hot: {column: land_use}` makes land_use=farm and land_use=forest from those two categories.
 */
export const oneHot: LearnedFeature<OneHotParams> = {
  kind: 'one_hot',
  // a category becomes indicators; nothing else applies to them
  stage: 0,
  learn(params, frame, rows, design) {
    const values = column(frame, params.column).values;
    const seen = new Set<string>();
    for (let i = 0; i < rows.length; i++) {
      const v = values[rows[i]];
      if (v !== null && !(typeof v === 'number' && Number.isNaN(v))) seen.add(String(v));
    }
    if (seen.size > params.max_levels) throw new DendrologError(messages.tooManyLevels(params.column, seen.size, params.max_levels), 1);
    design.oneHot[params.column] = { categories: [...seen].sort(), unseen: params.unseen };
  },
  recipe: {
    section: 'features',
    schema: {
      type: 'object',
      additionalProperties: false,
      required: ['column'],
      description:
        'Turns a text or category predictor into one indicator column per category in the training rows, learned inside each fold and in the final fit, so the models can use it.',
      properties: {
        column: { $ref: '#/definitions/columnName', description: 'The text or category column to expand; it must be one of the predictors.' },
        unseen: {
          enum: ['error', 'other'],
          description: 'A category the training rows never had: error (default) stops the run, other counts it in a shared "(other)" indicator column.',
        },
        max_levels: {
          type: 'integer',
          minimum: 1,
          maximum: 100000,
          description: `Most categories allowed, from 1 to 100000; more stops the run, since an identifier or free-text column would make one column per value. Default ${DEFAULT_MAX_LEVELS}.`,
        },
      },
    },
    normalize: (v) => {
      const r = v as { column: string; unseen?: OneHotParams['unseen']; max_levels?: number };
      return { column: String(r.column), unseen: r.unseen ?? 'error', max_levels: r.max_levels ?? DEFAULT_MAX_LEVELS };
    },
    shape: (p) => ({ column: p.column, unseen: p.unseen, max_levels: p.max_levels }),
    describe: (p) => `${p.column} (unseen categories: ${p.unseen})`,
    reads: (p) => [{ column: p.column, at: ['column'] }],
    encodes: (p) => [p.column],
  },
};
