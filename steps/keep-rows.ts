import { toArquero } from '../core/arquero-table.js';
import { takeRows } from '../core/frame.js';
import { DendrologError, messages } from '../core/messages.js';
import type { FrameOutput, StepDefinition } from '../core/step-types.js';
import { assertRowWise, expressionSite, missingInputs, referencedColumns, withinBudget, withMissingInputs } from './expressions.js';

export interface KeepRowsParams {
  expr: string;
}

/**
 * Keeps the rows for which an arquero expression is true; rows where it is false or missing (null,
 * undefined) are dropped. Any other result (a number, NaN, a string, a date) is refused with a
 * message, since dropping those rows silently would hide a mistyped condition. The expression must
 * be row-wise and finish within its time budget (see ./expressions.ts).
 */
export const keepRows: StepDefinition<KeepRowsParams, FrameOutput> = {
  kind: 'keep_rows',
  version: 1,
  codec: 'frame',
  run(inputs, params, ctx) {
    const input = (inputs[0] as FrameOutput).frame;
    const site = expressionSite(ctx.locator, 'keep_rows', params.expr);
    assertRowWise(site);
    const table = toArquero(input);
    const computed = withinBudget(site, input.rows, () => table.derive({ keep: params.expr }).array('keep') as ArrayLike<unknown>);
    // a condition on a missing value is unknown, so the row goes (as a missing result always did)
    const results = withMissingInputs(computed, missingInputs(input, params.expr));
    const kept: number[] = [];
    let odd = 0;
    let first = '';
    for (let i = 0; i < results.length; i++) {
      const v = results[i];
      if (v === true) kept.push(i);
      else if (v === false || v === null || v === undefined) continue;
      else if (odd++ === 0) first = describeValue(v, i);
    }
    if (odd > 0) {
      const msg = messages.keepRowsNotBoolean(site.step, site.expr, first, odd, input.rows);
      throw new DendrologError(site.where ? `${site.where}: ${msg}` : msg, 1);
    }
    const frame = takeRows(input, kept);
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: frame.rows,
        detail: `${input.rows - frame.rows} rows dropped where ${JSON.stringify(params.expr)} is not true`,
      },
    };
  },
  summary: (o) => `${o.notes.rowsIn - o.notes.rowsOut} rows dropped`,
  recipe: {
    section: 'clean',
    schema: {
      type: 'string',
      minLength: 1,
      description:
        'An arquero condition over the row\'s own values, such as "d.depth_m <= 2"; rows where it is false or missing are dropped. Any result other than true, false or missing stops the run.',
    },
    normalize: (v) => ({ expr: v as string }),
    shape: (p) => p.expr,
    reads: (p) => referencedColumns(p.expr).map((column) => ({ column, at: [] })),
    expressions: (p) => [{ expr: p.expr, at: [] }],
    without: (p, absent) => (referencedColumns(p.expr).some((c) => absent.has(c)) ? null : p),
    rowReason: (p) => `${JSON.stringify(p.expr)} is not true`,
  },
};

/** A result that is not a condition, as the message shows it: `2.5 (a number) at row 3`. */
function describeValue(v: unknown, i: number): string {
  const shown = typeof v === 'string' ? JSON.stringify(v.length > 40 ? v.slice(0, 40) + '…' : v) : v instanceof Date && !Number.isNaN(v.getTime()) ? v.toISOString() : String(v);
  const type = v instanceof Date ? 'a date' : typeof v === 'string' ? 'text' : typeof v === 'number' ? 'a number' : typeof v;
  return `${shown} (${type}) at row ${i + 1} of the table reaching this step`;
}
