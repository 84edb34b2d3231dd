import { columnFromValues, toArquero, type Frame } from '../core/frame.js';
import { messages } from '../core/messages.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { assertRowWise, checkTextSize, expressionSite, missingInputs, withinBudget, withMissingInputs } from './expressions.js';
import { dict } from '../core/dict.js';

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
};
