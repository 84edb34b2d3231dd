import { isMap, isPair, isScalar, LineCounter, parseDocument, type Document, type Node } from 'yaml';
import { messages } from './messages.js';

/** A YAML document read with its positions, so later errors can point at file:line:column. */
export interface PositionedDocument {
  /** The file as the user should see it in messages (relative to the working folder). */
  displayPath: string;
  value: unknown;
  /** `file:line:column` of the value at a path, or of its nearest existing parent. */
  where(path: (string | number)[]): string;
  /** `file:line:column` of the key at the end of a path (for unknown keys). */
  whereKey(path: (string | number)[]): string;
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
    uniqueKeys: true,
    prettyErrors: false,
    lineCounter,
  });
  const at = (offset: number): string => {
    const p = lineCounter.linePos(offset);
    return `${displayPath}:${p.line}:${p.col}`;
  };
  if (doc.errors.length > 0) {
    const problems = doc.errors.map((e) => {
      const offset = e.pos[0];
      if (e.code === 'DUPLICATE_KEY') {
        return `${at(offset)}: ${messages.yamlDuplicateKey(keyTextAt(text, offset))}`;
      }
      return `${at(offset)}: ${messages.yamlSyntax(firstLine(e.message))}`;
    });
    return { problems };
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
  return { doc: { displayPath, value, where, whereKey }, problems: [] };
}

function nodeOffset(doc: Document, path: (string | number)[]): number {
  for (let n = path.length; n >= 0; n--) {
    const node = (n === 0 ? doc.contents : doc.getIn(path.slice(0, n), true)) as Node | null | undefined;
    if (node && typeof node === 'object' && 'range' in node && node.range) return node.range[0];
  }
  return 0;
}

function firstLine(s: string): string {
  return s.split('\n')[0].replace(/ at line \d+, column \d+:?$/, '');
}

function keyTextAt(text: string, offset: number): string {
  const rest = text.slice(offset);
  const m = /^["']?([^"':\n]+)["']?\s*:/.exec(rest);
  return m ? m[1].trim() : rest.split('\n')[0];
}
