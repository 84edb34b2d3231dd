import type { Frame } from '../core/frame.js';
import { listedColumns, type FrameOutput, type StepDefinition } from '../core/step-types.js';
import { dict } from '../core/dict.js';

export interface ReplaceParams {
  columns: string[];
  values: (string | number)[];
  with: 'missing' | number;
}

/** Replaces listed values (such as a -9999 sentinel) in listed columns, counting each change. */
export const replace: StepDefinition<ReplaceParams, FrameOutput> = {
  kind: 'replace',
  version: 1,
  codec: 'frame',
  run(inputs, params) {
    const input = (inputs[0] as FrameOutput).frame;
    const changed = dict<number>();
    const columns = input.columns.map((c) => {
      if (!params.columns.includes(c.name)) return c;
      let n = 0;
      if (c.values instanceof Float64Array) {
        const targets = new Set(params.values.map(Number).filter((v) => !Number.isNaN(v)));
        const out = Float64Array.from(c.values);
        const to = params.with === 'missing' ? NaN : params.with;
        for (let i = 0; i < out.length; i++) {
          if (targets.has(out[i])) {
            out[i] = to;
            n++;
          }
        }
        changed[c.name] = n;
        return { ...c, values: out };
      }
      const targets = new Set(params.values.map(String));
      const to = params.with === 'missing' ? null : String(params.with);
      const out = c.values.map((v) => (v !== null && targets.has(v) ? (n++, to) : v));
      changed[c.name] = n;
      return { ...c, values: out };
    });
    const frame: Frame = { rows: input.rows, columns };
    const total = Object.values(changed).reduce((a, b) => a + b, 0);
    const by = params.with === 'missing' ? 'missing' : String(params.with);
    return {
      frame,
      notes: {
        rowsIn: input.rows,
        rowsOut: input.rows,
        detail: `${total} values equal to ${params.values.join(', ')} set to ${by} (${Object.entries(changed)
          .map(([k, v]) => `${k}: ${v}`)
          .join(', ')})`,
        changed,
      },
    };
  },
  summary: (o) => `${Object.values(o.notes.changed ?? {}).reduce((a, b) => a + b, 0)} values replaced`,
  recipe: {
    section: 'clean',
    schema: {
      type: 'object',
      additionalProperties: false,
      required: ['columns', 'values', 'with'],
      description: 'Replaces listed values, such as a -9999 sentinel, in the listed columns; the report counts the changes per column.',
      properties: {
        columns: { $ref: '#/definitions/columnList', description: 'The columns whose values are replaced.' },
        values: {
          type: 'array',
          minItems: 1,
          items: { $ref: '#/definitions/scalar' },
          description: 'The values to replace, as numbers or text; in a number column they are compared as numbers, in a text column as text.',
        },
        with: {
          anyOf: [{ const: 'missing' }, { type: 'number' }],
          description: 'What the values become: missing, or a number (written as text in a text column).',
        },
      },
    },
    normalize: (v) => {
      const r = v as ReplaceParams;
      return { columns: r.columns, values: r.values, with: r.with };
    },
    shape: (p) => ({ columns: p.columns, values: p.values, with: p.with }),
    reads: (p) => listedColumns(p.columns),
    without: (p, absent) => {
      const columns = p.columns.filter((c) => !absent.has(c));
      return columns.length ? { ...p, columns } : null;
    },
    rowReason: () => 'replaced',
  },
};
