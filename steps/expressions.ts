/**
 * The rules every recipe expression (a `derive` column, a `keep_rows` condition) lives by, shared by
 * `check`, the steps and `predict`:
 * - row-wise only: arquero's aggregate and window functions (its own registry, through its own
 *   parser) are refused, because they read every row of the table, holdout rows included;
 * - a time budget: evaluation runs under node:vm's timeout, which interrupts synchronous code,
 *   regular-expression backtracking included, so a catastrophic pattern stops instead of hanging;
 * - engine failures (an invalid string length, a call stack overflow) and text values too long to
 *   keep become messages naming the step and the expression.
 * The file sits in steps/ so that its code is part of every step key's software fingerprint.
 */
import * as aq from 'arquero';
import { hasAggregate, hasWindow } from 'arquero/src/op/index.js';
import vm from 'node:vm';
import { DendrologError, messages } from '../core/messages.js';
import { isMissing, type Frame } from '../core/frame.js';

/** An aggregate or window function call inside an expression, with its character offsets. */
export interface WholeTableCall {
  name: string;
  family: 'aggregate' | 'window';
  /** Offsets into the expression text: expr.slice(start, end) is the call. */
  start: number;
  end: number;
}

export type ExpressionProblem =
  | { kind: 'compile'; detail: string }
  | { kind: 'whole-table'; call: WholeTableCall }
  | { kind: 'not-repeatable'; name: string };

/** arquero parses `expr=(<expression>)`, so its node offsets count these 6 characters. */
const PARSE_PREFIX = 'expr=('.length;

interface ParseNode {
  type: string;
  start: number;
  end: number;
  callee?: { type: string; name?: string; object?: { type: string; name?: string }; property?: { name?: string } };
}

class StopParse extends Error {}

/**
 * What is wrong with an expression before any data is read: it does not compile, or it calls a
 * function that sees more than its own row. arquero's parser decides which calls those are, from
 * its registry of aggregate and window functions, so a function added to arquero is covered too.
 *
 * Example: `expressionProblem('d.x - op.mean(d.x)')` is `{kind: 'whole-table', call: {name: 'mean', family: 'aggregate', start: 6, end: 18}}`.
 */
export function expressionProblem(expr: string): ExpressionProblem | undefined {
  let call: WholeTableCall | undefined;
  const options = {
    aggregate: false,
    window: false,
    // arquero calls this for every construct it refuses; the default only names the snippet
    error(node: ParseNode, msg: string) {
      const name = node.type === 'CallExpression' ? calleeName(node) : undefined;
      if (name && (hasAggregate(name) || hasWindow(name))) {
        call = { name, family: hasAggregate(name) ? 'aggregate' : 'window', start: node.start - PARSE_PREFIX, end: node.end - PARSE_PREFIX };
        throw new StopParse();
      }
      throw new Error(`${msg}: "${expr.slice(node.start - PARSE_PREFIX, node.end - PARSE_PREFIX)}"`);
    },
  };
  let tree: unknown;
  try {
    // one parse: the tree it returns is walked for calls whose value changes from run to run
    tree = (aq.parse({ x: expr }, { ...options, ast: true }) as unknown as { exprs: unknown[] }).exprs[0];
  } catch (e) {
    if (call) return { kind: 'whole-table', call };
    return { kind: 'compile', detail: (e as Error).message.split('\n')[0] };
  }
  const name = unrepeatableCall(tree);
  return name ? { kind: 'not-repeatable', name } : undefined;
}

/**
 * The first call in an expression tree whose value changes from run to run: a random number, or
 * the clock (now(), and datetime() or utcdatetime() without arguments). Such a column would make a
 * rerun differ and verify fail for no reason in the data.
 */
function unrepeatableCall(node: unknown): string | undefined {
  if (node === null || typeof node !== 'object') return undefined;
  const n = node as { type?: string; callee?: { type?: string; name?: string }; arguments?: unknown[] };
  if (n.type === 'CallExpression' && n.callee?.type === 'Function') {
    const name = n.callee.name ?? '';
    if (name === 'random' || name === 'now') return name;
    if ((name === 'datetime' || name === 'utcdatetime') && (n.arguments?.length ?? 0) === 0) return name;
  }
  for (const v of Object.values(n)) {
    const found = Array.isArray(v) ? v.map(unrepeatableCall).find(Boolean) : unrepeatableCall(v);
    if (found) return found;
  }
  return undefined;
}

/** The function name arquero resolves a call to (op.mean, mean, Math.max → greatest). */
function calleeName(node: ParseNode): string | undefined {
  const c = node.callee;
  if (!c) return undefined;
  if (c.type === 'Identifier') return c.name;
  if (c.type !== 'MemberExpression') return undefined;
  const name = c.property?.name;
  if (c.object?.type === 'Identifier' && c.object.name === 'Math') return name === 'max' ? 'greatest' : name === 'min' ? 'least' : name;
  return name;
}

/** Throws the located recipe error for an expression that is not row-wise or does not compile. */
export function assertRowWise(site: ExpressionSite): void {
  const problem = expressionProblem(site.expr);
  if (!problem) return;
  const msg =
    problem.kind === 'compile'
      ? messages.expressionCompile(site.expr, problem.detail)
      : problem.kind === 'not-repeatable'
        ? messages.expressionNotRepeatable(site.expr, problem.name)
        : messages.expressionWholeTable(site.expr, problem.call.name, problem.call.family);
  throw new DendrologError(located(site, `${site.step}: ${msg}`), 2);
}

/** Environment variable holding the base time budget of one expression, in seconds. */
export const EXPRESSION_BUDGET_VARIABLE = 'DENDROLOG_EXPRESSION_SECONDS';
const DEFAULT_BUDGET_SECONDS = 5;
/** Added per row, so a large table's honest work is never mistaken for a runaway expression. */
const BUDGET_MS_PER_ROW = 0.005;

/**
 * Milliseconds one expression may take over a table of `rows` rows: the base (5 s, or the
 * environment variable's seconds) plus 5 µs a row.
 *
 * Example: `expressionBudgetMs(1_000_000)` is 10000 by default.
 */
export function expressionBudgetMs(rows: number): number {
  const raw = process.env[EXPRESSION_BUDGET_VARIABLE];
  let seconds = DEFAULT_BUDGET_SECONDS;
  if (raw !== undefined && raw.trim() !== '') {
    seconds = Number(raw);
    if (!Number.isFinite(seconds) || seconds <= 0) throw new DendrologError(messages.expressionBudgetValue(EXPRESSION_BUDGET_VARIABLE, raw), 2);
  }
  return Math.max(1, Math.ceil(seconds * 1000 + rows * BUDGET_MS_PER_ROW));
}

/** Where an expression sits, for messages: the step, its file:line:column when known, the derived column. */
export interface ExpressionSite {
  /** Such as `features[0] derive, column "x3"` or `clean[1] keep_rows`. */
  step: string;
  /** `file:line:column` of the expression in the recipe, when known. */
  where?: string;
  expr: string;
}

const located = (site: ExpressionSite, msg: string): string => (site.where ? `${site.where}: ${msg}` : msg);

/**
 * The locator a derive or keep_rows step carries (outside its key): the step's label and the
 * position of each expression, so a failure while running still points into the recipe.
 * Column names travel inside a JSON list, never as keys of the locator.
 */
export function expressionLocator(step: string, positions: [column: string | null, where: string][]): Record<string, string> {
  return { step, expressions: JSON.stringify(positions) };
}

/** The site of one expression of a step, from its locator (or bare, as when a test calls the step). */
export function expressionSite(locator: Record<string, string>, kind: string, expr: string, column?: string): ExpressionSite {
  const step = Object.hasOwn(locator, 'step') ? locator.step : kind;
  let where: string | undefined;
  if (Object.hasOwn(locator, 'expressions')) {
    const positions = JSON.parse(locator.expressions) as [string | null, string][];
    where = positions.find(([c]) => c === (column ?? null))?.[1];
  }
  return { step: column === undefined ? step : `${step}, column ${JSON.stringify(column)}`, where, expr };
}

let sandbox: vm.Context | undefined;
let script: vm.Script | undefined;

/**
 * Runs `evaluate` (which applies one expression to a table of `rows` rows) within the time budget
 * and turns what the engine throws into a message naming the step and the expression (exit 1).
 *
 * Example: `withinBudget(site, t.numRows(), () => t.derive({k: site.expr}).array('k'))`
 */
export function withinBudget<T>(site: ExpressionSite, rows: number, evaluate: () => T): T {
  const ms = expressionBudgetMs(rows);
  // one context for the process: making one costs about a millisecond, running in it almost nothing
  sandbox ??= vm.createContext(Object.create(null) as object);
  script ??= new vm.Script('evaluate()');
  (sandbox as { evaluate?: () => T }).evaluate = evaluate;
  try {
    return script.runInContext(sandbox, { timeout: ms }) as T;
  } catch (e) {
    if (e instanceof DendrologError) throw e;
    if ((e as { code?: unknown } | null)?.code === 'ERR_SCRIPT_EXECUTION_TIMEOUT') {
      throw new DendrologError(located(site, messages.expressionTimeout(site.step, site.expr, ms / 1000, EXPRESSION_BUDGET_VARIABLE)), 1);
    }
    if (e instanceof Error) throw new DendrologError(located(site, messages.expressionFailed(site.step, site.expr, `${e.name}: ${e.message.split('\n')[0]}`)), 1);
    throw e;
  } finally {
    (sandbox as { evaluate?: () => T }).evaluate = undefined;
  }
}

/** Longest text value an expression may give; longer ones are built by mistake (op.repeat, op.padstart). */
export const MAX_TEXT_VALUE_CHARS = 1_000_000;
/** Most text one expression may give over a whole table. */
export const MAX_TEXT_COLUMN_CHARS = 100_000_000;

/**
 * Refuses text results too long to keep. V8 builds op.repeat and op.padstart results lazily, so a
 * huge one costs nothing until it is read: measuring here, before anything reads the characters,
 * stops it before it can exhaust memory.
 */
export function checkTextSize(site: ExpressionSite, values: ArrayLike<unknown>): void {
  let total = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    // a list (op.match gives one) or a record is no column value: it would turn into text and then
    // into a missing number far from here
    if (v !== null && typeof v === 'object' && !(v instanceof Date)) {
      throw new DendrologError(located(site, messages.expressionNotAValue(site.step, site.expr, Array.isArray(v) ? 'a list' : 'a record', i + 1)), 1);
    }
    if (typeof v !== 'string') continue;
    if (v.length > MAX_TEXT_VALUE_CHARS) {
      throw new DendrologError(located(site, messages.expressionTextTooLong(site.step, site.expr, v.length, MAX_TEXT_VALUE_CHARS, 'one value')), 1);
    }
    total += v.length;
    if (total > MAX_TEXT_COLUMN_CHARS) {
      throw new DendrologError(located(site, messages.expressionTextTooLong(site.step, site.expr, total, MAX_TEXT_COLUMN_CHARS, 'all rows together')), 1);
    }
  }
}

/** Column names referenced as d.name or d["name"] in an arquero expression. */
export function referencedColumns(expr: string): string[] {
  const out = new Set<string>();
  const re = /\bd\.([A-Za-z_$][\w$]*)|\bd\[\s*["']([^"']+)["']\s*\]/g;
  for (let m = re.exec(expr); m; m = re.exec(expr)) out.add(m[1] ?? m[2]);
  return [...out];
}

/**
 * The rows on which an expression's value is missing because a column it names is missing there.
 * arquero hands a missing value to the expression as null, which arithmetic reads as 0 (null * 2 is
 * 0, null + 'z' is 'nullz'), so a value computed from it would look right and be wrong. A derived
 * value, or a keep_rows condition, of such a row is missing instead, as R's NA would be.
 *
 * Example: for `d.x * 2` over x = [1, missing], the mask is [0, 1].
 */
export function missingInputs(frame: Frame, expr: string): Uint8Array {
  const mask = new Uint8Array(frame.rows);
  const names = new Set(referencedColumns(expr));
  for (const c of frame.columns) {
    if (!names.has(c.name)) continue;
    for (let i = 0; i < frame.rows; i++) if (isMissing(c, i)) mask[i] = 1;
  }
  return mask;
}

/** The values with every masked row set to missing (a copy when anything is masked). */
export function withMissingInputs(values: ArrayLike<unknown>, mask: Uint8Array): ArrayLike<unknown> {
  if (!mask.includes(1)) return values;
  return Array.from(values, (v, i) => (mask[i] ? null : v));
}

