/**
 * Compact binary form of a fitted forest, round-tripping bit for bit.
 *
 * Layout (little-endian):
 *   8 bytes  magic "DNDRFRST"
 *   u32      format version (2)
 *   u32      header length, then that many bytes of UTF-8 JSON: kind, feature names, training rows,
 *            settings, OOB summary, width of feature indices
 *   f64 × p  impurity importance
 *   f64      OOB R² (NaN when undefined)
 *   f64 × n  OOB predictions (NaN where a row was never out of bag)
 *   u32      number of trees, then per tree:
 *            u32 node count, node features in preorder (i16, or i32 past 32,766 features; -1 = leaf),
 *            then one f64 per node: the threshold of an internal node or the value of a leaf,
 *            then one u32 per node: the in-bag draws that reached it.
 * Child pointers are not stored: in preorder an internal node's left child is the next node and its
 * right child follows the left subtree, so they are rebuilt on reading. That makes a node 14 bytes.
 * Version 1 had no draws.
 *
 * Example: `deserializeForest(serializeForest(forest))` predicts exactly as `forest` does.
 */
import { EngineInputError, engineMessages as msg } from './engine-errors.js';
import type { Forest, ForestBlock, ForestSettings, OobResult } from './forest.js';
import type { Tree } from './tree.js';

const MAGIC = 'DNDRFRST';
export const FOREST_FORMAT_VERSION = 2;

interface Header {
  kind: Forest['kind'];
  featureNames: string[];
  trainingRows: number;
  options: ForestSettings;
  oob: { rowsExcluded: number; reason?: string };
  featureWidth: 2 | 4;
}

/** Serializes a fitted forest to bytes. */
export function serializeForest(f: Forest): Uint8Array {
  const p = f.featureNames.length;
  const width: 2 | 4 = p < 32767 ? 2 : 4;
  const o = f.options;
  // Keys in a fixed order, so equal forests give equal bytes.
  const header: Header = {
    kind: f.kind,
    featureNames: f.featureNames,
    trainingRows: f.trainingRows,
    options: {
      trees: o.trees,
      maxDepth: o.maxDepth,
      minLeaf: o.minLeaf,
      minSplit: o.minSplit,
      mtry: o.mtry,
      sampleFraction: o.sampleFraction,
      replace: o.replace,
      sampleSize: o.sampleSize,
      seed: o.seed,
      maxBins: o.maxBins,
    },
    oob: f.oob.reason === undefined ? { rowsExcluded: f.oob.rowsExcluded } : { rowsExcluded: f.oob.rowsExcluded, reason: f.oob.reason },
    featureWidth: width,
  };
  const headerBytes = new TextEncoder().encode(JSON.stringify(header));
  let size = 8 + 4 + 4 + headerBytes.length + 8 * p + 8 + 8 * f.trainingRows + 4;
  for (const t of f.trees) size += treeSize(t, width);
  const out = new Uint8Array(size);
  const view = new DataView(out.buffer);
  let at = 0;
  for (let i = 0; i < 8; i++) out[at++] = MAGIC.charCodeAt(i);
  view.setUint32(at, FOREST_FORMAT_VERSION, true);
  view.setUint32(at + 4, headerBytes.length, true);
  at += 8;
  out.set(headerBytes, at);
  at += headerBytes.length;
  for (let j = 0; j < p; j++, at += 8) view.setFloat64(at, f.impurityImportance[j], true);
  view.setFloat64(at, f.oob.r2 ?? NaN, true);
  at += 8;
  for (let r = 0; r < f.trainingRows; r++, at += 8) view.setFloat64(at, f.oob.predictions[r], true);
  view.setUint32(at, f.trees.length, true);
  at += 4;
  for (const t of f.trees) at = writeTree(view, at, t, width);
  return out;
}

/** Reads bytes written by serializeForest; throws EngineInputError for anything else. */
export function deserializeForest(bytes: Uint8Array): Forest {
  const bad = (why: string): EngineInputError => new EngineInputError(msg.notAForest(why));
  const view = openFormat(bytes, MAGIC, FOREST_FORMAT_VERSION, 16, bad);
  const headerLength = view.getUint32(12, true);
  let at = 16;
  const need = (k: number): void => {
    if (at + k > bytes.length) throw bad('it ends early (truncated?)');
  };
  need(headerLength);
  let header: Header;
  try {
    header = JSON.parse(new TextDecoder('utf-8', { fatal: true }).decode(bytes.subarray(at, at + headerLength))) as Header;
  } catch {
    throw bad('the header is not valid JSON');
  }
  at += headerLength;
  if (
    header === null ||
    typeof header !== 'object' ||
    !Array.isArray(header.featureNames) ||
    !Number.isInteger(header.trainingRows) ||
    typeof header.options !== 'object' ||
    typeof header.oob !== 'object'
  ) {
    throw bad('the header lacks feature names, row count, settings or OOB summary');
  }
  const p = header.featureNames.length;
  const n = header.trainingRows;
  const width = header.featureWidth;
  if (width !== 2 && width !== 4) throw bad('unknown feature index width');
  need(8 * p + 8 + 8 * n + 4);
  const importance = new Float64Array(p);
  for (let j = 0; j < p; j++, at += 8) importance[j] = view.getFloat64(at, true);
  const r2 = view.getFloat64(at, true);
  at += 8;
  const predictions = new Float64Array(n);
  for (let r = 0; r < n; r++, at += 8) predictions[r] = view.getFloat64(at, true);
  const treeCount = view.getUint32(at, true);
  at += 4;
  const trees: Tree[] = [];
  for (let k = 0; k < treeCount; k++) {
    const read = readTree(view, at, p, width, k, bad);
    trees.push(read.tree);
    at = read.at;
  }
  if (at !== bytes.length) throw bad(`${bytes.length - at} unexpected bytes after the last tree`);
  const oob: OobResult = { predictions, r2: Number.isNaN(r2) ? null : r2, rowsExcluded: header.oob.rowsExcluded };
  if (header.oob.reason !== undefined) oob.reason = header.oob.reason;
  return {
    kind: header.kind,
    featureNames: header.featureNames,
    trainingRows: n,
    options: header.options,
    trees,
    oob,
    impurityImportance: importance,
  };
}

/**
 * A view of bytes of one of this file's formats, after checking that they are at least `minLength`
 * long and start with `magic` and this build's `version` (u32 after the magic); `bad` makes the error.
 */
function openFormat(bytes: Uint8Array, magic: string, version: number, minLength: number, bad: (why: string) => Error): DataView {
  if (bytes.length < minLength) throw bad('too short');
  for (let i = 0; i < 8; i++) if (bytes[i] !== magic.charCodeAt(i)) throw bad('the magic header is missing');
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const found = view.getUint32(8, true);
  if (found !== version) throw bad(`format version ${found}, this build reads version ${version}`);
  return view;
}

/** Bytes one tree takes: its node count, then per node a feature index of `width` bytes, an f64 and a u32. */
function treeSize(t: Tree, width: 2 | 4): number {
  return 4 + t.feature.length * (width + 12);
}

/** Writes one tree at `at` (see the layout above); returns where the next thing goes. */
function writeTree(view: DataView, at: number, t: Tree, width: 2 | 4): number {
  const count = t.feature.length;
  view.setUint32(at, count, true);
  at += 4;
  for (let i = 0; i < count; i++, at += width) {
    if (width === 2) view.setInt16(at, t.feature[i], true);
    else view.setInt32(at, t.feature[i], true);
  }
  for (let i = 0; i < count; i++, at += 8) view.setFloat64(at, t.feature[i] >= 0 ? t.threshold[i] : t.value[i], true);
  for (let i = 0; i < count; i++, at += 4) view.setUint32(at, t.draws[i], true);
  return at;
}

/** Reads tree number `k` at `at`, rebuilding the child pointers; `bad` makes the error for bytes that are not one. */
function readTree(view: DataView, at: number, p: number, width: 2 | 4, k: number, bad: (why: string) => Error): { tree: Tree; at: number } {
  const need = (n: number): void => {
    if (at + n > view.byteLength) throw bad('it ends early (truncated?)');
  };
  need(4);
  const count = view.getUint32(at, true);
  at += 4;
  need(count * (width + 12));
  // one allocation per tree, not six
  const memory = new ArrayBuffer(count * 32);
  const t: Tree = {
    threshold: new Float64Array(memory, 0, count),
    value: new Float64Array(memory, 8 * count, count),
    feature: new Int32Array(memory, 16 * count, count),
    left: new Int32Array(memory, 20 * count, count),
    right: new Int32Array(memory, 24 * count, count),
    draws: new Int32Array(memory, 28 * count, count),
  };
  for (let i = 0; i < count; i++, at += width) {
    const feat = width === 2 ? view.getInt16(at, true) : view.getInt32(at, true);
    if (feat < -1 || feat >= p) throw bad(`tree ${k} node ${i} splits on feature ${feat} of ${p}`);
    t.feature[i] = feat;
  }
  const stack: number[] = [];
  for (let i = 0; i < count; i++, at += 8) {
    const v = view.getFloat64(at, true);
    if (i > 0) {
      if (t.feature[i - 1] >= 0) t.left[i - 1] = i;
      else {
        const parent = stack.pop();
        if (parent === undefined) throw bad(`tree ${k} has nodes after its last leaf`);
        t.right[parent] = i;
      }
    }
    if (t.feature[i] >= 0) {
      t.threshold[i] = v;
      t.value[i] = NaN;
      stack.push(i);
    } else {
      t.threshold[i] = NaN;
      t.value[i] = v;
      t.left[i] = -1;
      t.right[i] = -1;
    }
  }
  if (count === 0 || stack.length > 0 || t.feature[count - 1] >= 0) throw bad(`tree ${k} is incomplete`);
  for (let i = 0; i < count; i++, at += 4) {
    const w = view.getUint32(at, true);
    if (w > 0x7fffffff) throw bad(`tree ${k} node ${i} has ${w} draws`);
    t.draws[i] = w;
  }
  return { tree: t, at };
}

const BLOCKS_MAGIC = 'DNDRBLKS';
export const BLOCKS_FORMAT_VERSION = 2;

/**
 * Blocks of forest trees (growForestBlocks) as bytes, round-tripping bit for bit. Layout
 * (little-endian): 8 bytes magic "DNDRBLKS", u32 format version (2), u32 training rows n, u32
 * features p, u32 block count; then per block: u32 block index, f64 × p importance sums, f64 × n
 * out-of-bag sums, u8 × n out-of-bag counts, u32 tree count and the trees as in a forest (feature
 * indices of 2 bytes, or 4 past 32,766 features).
 *
 * Example: `deserializeBlocks(serializeBlocks(blocks, n, p))` equals `blocks`.
 */
export function serializeBlocks(blocks: ForestBlock[], rows: number, features: number): Uint8Array {
  const width: 2 | 4 = features < 32767 ? 2 : 4;
  let size = 8 + 4 * 4;
  for (const b of blocks) {
    size += 4 + 8 * features + 9 * rows + 4;
    for (const t of b.trees) size += treeSize(t, width);
  }
  const out = new Uint8Array(size);
  const view = new DataView(out.buffer);
  for (let i = 0; i < 8; i++) out[i] = BLOCKS_MAGIC.charCodeAt(i);
  view.setUint32(8, BLOCKS_FORMAT_VERSION, true);
  view.setUint32(12, rows, true);
  view.setUint32(16, features, true);
  view.setUint32(20, blocks.length, true);
  let at = 24;
  for (const b of blocks) {
    view.setUint32(at, b.index, true);
    at += 4;
    for (let f = 0; f < features; f++, at += 8) view.setFloat64(at, b.impSum[f], true);
    for (let r = 0; r < rows; r++, at += 8) view.setFloat64(at, b.oobSum[r], true);
    out.set(b.oobCount, at);
    at += rows;
    view.setUint32(at, b.trees.length, true);
    at += 4;
    for (const t of b.trees) at = writeTree(view, at, t, width);
  }
  return out;
}

/** Reads bytes written by serializeBlocks; throws EngineInputError for anything else. */
export function deserializeBlocks(bytes: Uint8Array): ForestBlock[] {
  const bad = (why: string): EngineInputError => new EngineInputError(msg.notBlocks(why));
  const view = openFormat(bytes, BLOCKS_MAGIC, BLOCKS_FORMAT_VERSION, 24, bad);
  const rows = view.getUint32(12, true);
  const features = view.getUint32(16, true);
  const count = view.getUint32(20, true);
  const width: 2 | 4 = features < 32767 ? 2 : 4;
  let at = 24;
  const need = (n: number): void => {
    if (at + n > bytes.length) throw bad('it ends early (truncated?)');
  };
  const blocks: ForestBlock[] = [];
  for (let k = 0; k < count; k++) {
    need(4 + 8 * features + 9 * rows + 4);
    const index = view.getUint32(at, true);
    at += 4;
    const impSum = new Float64Array(features);
    for (let f = 0; f < features; f++, at += 8) impSum[f] = view.getFloat64(at, true);
    const oobSum = new Float64Array(rows);
    for (let r = 0; r < rows; r++, at += 8) oobSum[r] = view.getFloat64(at, true);
    const oobCount = bytes.slice(at, at + rows);
    at += rows;
    const treeCount = view.getUint32(at, true);
    at += 4;
    const trees: Tree[] = [];
    for (let t = 0; t < treeCount; t++) {
      const read = readTree(view, at, features, width, t, bad);
      trees.push(read.tree);
      at = read.at;
    }
    blocks.push({ index, trees, oobSum, oobCount, impSum });
  }
  if (at !== bytes.length) throw bad(`${bytes.length - at} unexpected bytes after the last block`);
  return blocks;
}
