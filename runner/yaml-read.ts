import { isMap, isPair, isScalar, LineCounter, parseDocument, visit, type Document, type Node } from 'yaml';
import { messages } from '../core/messages.js';

/** A YAML document read with its positions, so later errors can point at file:line:column. */
export interface PositionedDocument {
  /** The file as the user should see it in messages (relative to the working folder). */
  displayPath: string;
  value: unknown;
  /** `file:line:column` of the value at a path, or of its nearest existing parent. */
  where(path: (string | number)[]): string;
  /** `file:line:column` of the key at the end of a path (for unknown keys). */
  whereKey(path: (string | number)[]): string;
  /**
   * `file:line:column` of characters start..end of the string value at a path (a call inside an
   * expression); the value's own position when that piece cannot be found verbatim in the file
   * (escapes or folded lines inside it).
   */
  whereInValue(path: (string | number)[], start: number, end: number): string;
}

export interface YamlProblem {
  line: number;
  col: number;
  message: string;
}

/** Aliases are allowed but capped, so a small file cannot expand into a huge one. */
const MAX_ALIASES = 50;

/**
 * Reads YAML 1.2 (core schema) with unique keys; returns problems with positions instead of throwing.
 *
 * Example: `readYaml('a: 1', 'r.yaml').doc?.value` is `{a: 1}`.
 */
export function readYaml(text: string, displayPath: string): { doc?: PositionedDocument; problems: string[] } {
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, {
    version: '1.2',
    schema: 'core',
    // the library compares each key with every earlier one (quadratic: 160,000 keys never finish);
    // duplicateKeys below does the same check with one Set per mapping
    uniqueKeys: false,
    prettyErrors: false,
    lineCounter,
  });
  const at = (offset: number): string => {
    const p = lineCounter.linePos(offset);
    return `${displayPath}:${p.line}:${p.col}`;
  };
  const found = [
    ...doc.errors.map((e) => ({ offset: e.pos[0], message: messages.yamlSyntax(firstLine(e.message)) })),
    ...duplicateKeys(doc, text),
  ];
  if (found.length > 0) {
    found.sort((a, b) => a.offset - b.offset);
    return { problems: found.map((p) => `${at(p.offset)}: ${p.message}`) };
  }
  let value: unknown;
  try {
    value = doc.toJS({ maxAliasCount: MAX_ALIASES });
  } catch (e) {
    return { problems: [`${displayPath}:1:1: ${messages.yamlSyntax(firstLine((e as Error).message))}`] };
  }
  const where = (path: (string | number)[]): string => at(nodeOffset(doc, path));
  const whereKey = (path: (string | number)[]): string => {
    const parent = doc.getIn(path.slice(0, -1), true) as Node | undefined;
    const last = path[path.length - 1];
    if (parent && isMap(parent)) {
      for (const pair of parent.items) {
        if (isPair(pair) && isScalar(pair.key) && String(pair.key.value) === String(last) && pair.key.range) {
          return at(pair.key.range[0]);
        }
      }
    }
    return where(path);
  };
  const whereInValue = (path: (string | number)[], start: number, end: number): string => {
    const node = doc.getIn(path, true) as Node | undefined;
    if (!node || !isScalar(node) || typeof node.value !== 'string' || !node.range) return where(path);
    const piece = node.value.slice(start, end);
    if (!piece) return where(path);
    // the same text may occur more than once: find the occurrence with as many before it
    let before = 0;
    for (let i = node.value.indexOf(piece); i >= 0 && i < start; i = node.value.indexOf(piece, i + 1)) before++;
    const source = text.slice(node.range[0], node.range[1]);
    let j = source.indexOf(piece);
    for (; j >= 0 && before > 0; before--) j = source.indexOf(piece, j + 1);
    return j >= 0 ? at(node.range[0] + j) : where(path);
  };
  return { doc: { displayPath, value, where, whereKey, whereInValue }, problems: [] };
}

function nodeOffset(doc: Document, path: (string | number)[]): number {
  for (let n = path.length; n >= 0; n--) {
    const node = (n === 0 ? doc.contents : doc.getIn(path.slice(0, n), true)) as Node | null | undefined;
    if (node && typeof node === 'object' && 'range' in node && node.range) return node.range[0];
  }
  return 0;
}

/**
 * Keys that repeat within one mapping, at the repeat's position, in time linear in the keys. Scalar
 * keys are equal when they become the same JavaScript property: `true` and `"true"`, or `1` and
 * `"1"`, differ in YAML but would overwrite each other in the recipe that is read, so they repeat
 * here. Other keys compare by their source text.
 */
function duplicateKeys(doc: Document, text: string): { offset: number; message: string }[] {
  const out: { offset: number; message: string }[] = [];
  visit(doc, {
    Map(_, map) {
      const seen = new Set<unknown>();
      for (const pair of map.items) {
        const key = pair.key as Node | null;
        if (!key || !key.range) continue;
        const id = isScalar(key) ? String(key.value) : `\u0000${text.slice(key.range[0], key.range[1])}`;
        if (!seen.has(id)) {
          seen.add(id);
          continue;
        }
        const shown = isScalar(key) ? String(key.value) : text.slice(key.range[0], Math.min(key.range[1], key.range[0] + 60));
        out.push({ offset: key.range[0], message: messages.yamlDuplicateKey(shown) });
      }
    },
  });
  return out;
}

function firstLine(s: string): string {
  return s.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
}
