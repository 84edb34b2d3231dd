import { toArquero } from '../core/arquero-table.js';
import { columnFromValues, type Frame } from '../core/frame.js';
import { messages } from '../core/messages.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { assertRowWise, checkTextSize, expressionSite, missingInputs, referencedColumns, withinBudget, withMissingInputs } from './expressions.js';
import { dict, dictOf } from '../core/dict.js';

export interface DeriveParams {
  columns: Record<string, string>;
}

/**
 * Adds columns computed row by row from arquero expressions. A row missing a column the expression
 * names gets a missing value (never the 0 that arithmetic would make of it). Non-finite results (a
 * log of zero) become missing and are reported as a warning with their count.
 * Each expression must be row-wise and finish within its time budget (see ./expressions.ts).
 */
export const derive: StepDefinition<DeriveParams, FrameOutput> = {
  kind: 'derive',
  version: 1,
  codec: 'frame',
  run(inputs, params, ctx) {
    const input = (inputs[0] as FrameOutput).frame;
    const sites = Object.entries(params.columns).map(([name, expr]) => [name, expressionSite(ctx.locator, 'derive', expr, name)] as const);
    // all refused before any is evaluated, as `check` would have
    for (const [, site] of sites) assertRowWise(site);
    const table = toArquero(input);
    const frame: Frame = { rows: input.rows, columns: [...input.columns] };
    const changed = dict<number>();
    // one column at a time, so a failure names its expression; no expression may name a sibling
    for (const [name, site] of sites) {
      const computed = withinBudget(site, input.rows, () => table.derive({ [name]: site.expr }).array(name) as ArrayLike<unknown>);
      const values = withMissingInputs(computed, missingInputs(input, site.expr));
      checkTextSize(site, values);
      const { column, nonFinite } = columnFromValues(name, values);
      frame.columns.push(column);
      if (nonFinite > 0) {
        changed[name] = nonFinite;
        ctx.warn('derive-non-finite', messages.deriveNonFinite(name, params.columns[name], nonFinite));
      }
    }
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: input.rows,
        detail: `derived ${Object.entries(params.columns)
          .map(([k, v]) => `${k} = ${v}`)
          .join('; ')}`,
        changed,
      },
    };
  },
  summary: (o) => `${o.frame.columns.length} columns`,
  recipe: {
    section: 'features',
    // written as a map of new column names to expressions, directly under the kind
    schema: {
      type: 'object',
      minProperties: 1,
      propertyNames: { pattern: '^[A-Za-z_][A-Za-z0-9_]*$' },
      description:
        'New columns, each named by its key (letters, digits and underscores) and computed row by row from an arquero expression. A row missing a column the expression names gets a missing value, and so does a result that is not finite.',
      additionalProperties: {
        type: 'string',
        minLength: 1,
        description: 'An arquero expression over the row\'s own values, such as "op.log10(d.tp_ug_l)"; it may not name another column of the same derive step.',
      },
    },
    normalize: (v) => ({ columns: dictOf(v as Record<string, string>) }),
    shape: (p) => p.columns,
    describe: (p) => Object.entries(p.columns).map(([k, v]) => `${k} = ${v}`).join('; '),
    reads: (p) => Object.entries(p.columns).flatMap(([name, expr]) => referencedColumns(expr).map((column) => ({ column, at: [name] }))),
    writes: (p) => Object.entries(p.columns).map(([name, expr]) => ({ column: name, type: 'number' as const, at: [name], from: referencedColumns(expr) })),
    expressions: (p) => Object.entries(p.columns).map(([name, expr]) => ({ expr, at: [name], column: name })),
    // a derived column named like an absent one (the target of new data) is not computed; others are,
    // with missing values where they read an absent column
    without: (p, absent) => {
      const columns = dict(Object.entries(p.columns).filter(([name]) => !absent.has(name)));
      return Object.keys(columns).length === 0 ? null : { columns };
    },
  },
};
