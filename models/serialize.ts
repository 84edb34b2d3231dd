/**
 * Binary form of a fitted forest, round-tripping bit for bit, laid out so that reading it takes no
 * copy of the trees: each tree's arrays are views of the bytes.
 *
 * Layout (little-endian; every array starts at a multiple of 8 bytes from the start):
 *   8 bytes  magic "DNDRFRST"
 *   u32      format version (3)
 *   u32      header length, then that many bytes of UTF-8 JSON: kind, feature names, training rows,
 *            settings, OOB summary; zeros up to a multiple of 8
 *   f64 × p  impurity importance
 *   f64      OOB R² (NaN when undefined)
 *   f64 × n  OOB predictions (NaN where a row was never out of bag)
 *   u32      number of trees, u32 zero, then per tree:
 *            u32 node count c, u32 zero, f64 × c the threshold of each internal node or the value
 *            of each leaf (nodes in preorder), i32 × c node features (-1 = leaf), i32 × c the
 *            in-bag draws that reached each node.
 * Right children are not stored: in preorder an internal node's left child is the next node and its
 * right child follows the left subtree, so they are rebuilt on reading (4 bytes a node). A node
 * takes 16 bytes in the bytes and 20 once read.
 *
 * A read forest's tree arrays, importance and OOB predictions are views of the bytes (of a copy
 * when the bytes do not start at a multiple of 8): they are read, never written.
 *
 * Version 2 (14 bytes a node: features as i16, or i32 past 32,766 features, no padding) is still
 * read, into new arrays; version 1 had no draws and is not.
 *
 * Example: `deserializeForest(serializeForest(forest))` predicts exactly as `forest` does.
 */
import { EngineInputError, engineMessages as msg } from './engine-errors.js';
import type { Forest, ForestBlock, ForestSettings, OobResult } from './forest.js';
import { rightChildren, type Tree } from './tree.js';

const MAGIC = 'DNDRFRST';
export const FOREST_FORMAT_VERSION = 3;
/** The older version deserializeForest still reads. */
const FOREST_FORMAT_V2 = 2;

interface Header {
  kind: Forest['kind'];
  featureNames: string[];
  trainingRows: number;
  options: ForestSettings;
  oob: { rowsExcluded: number; reason?: string };
  /** Version 2 only: bytes per feature index. */
  featureWidth?: 2 | 4;
}

/** `at` rounded up to a multiple of 8. */
const aligned = (at: number): number => (at + 7) & ~7;

/** Serializes a fitted forest to bytes. */
export function serializeForest(f: Forest): Uint8Array {
  const w = forestWriter(f);
  const out = new Uint8Array(w.length);
  w.write(out);
  return out;
}

/**
 * serializeForest in two parts: the length of the forest's bytes, and a function writing them into
 * a place of that length that starts at a multiple of 8 bytes in memory (a step's entry, so the
 * bytes are never first made apart from it).
 */
export function forestWriter(f: Forest): { length: number; write(into: Uint8Array): void } {
  const p = f.featureNames.length;
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
  };
  const headerBytes = new TextEncoder().encode(JSON.stringify(header));
  const start = aligned(16 + headerBytes.length);
  let size = start + 8 * p + 8 + 8 * f.trainingRows + 8;
  for (const t of f.trees) size += treeSize(t);
  const write = (out: Uint8Array): void => {
    if (out.length !== size) throw new Error(`internal: a forest of ${size} bytes written into ${out.length}`);
    out.fill(0, 0, start);
    const view = new DataView(out.buffer, out.byteOffset, out.byteLength);
    for (let i = 0; i < 8; i++) out[i] = MAGIC.charCodeAt(i);
    view.setUint32(8, FOREST_FORMAT_VERSION, true);
    view.setUint32(12, headerBytes.length, true);
    out.set(headerBytes, 16);
    let at = start;
    for (let j = 0; j < p; j++, at += 8) view.setFloat64(at, f.impurityImportance[j], true);
    view.setFloat64(at, f.oob.r2 ?? NaN, true);
    at += 8;
    for (let r = 0; r < f.trainingRows; r++, at += 8) view.setFloat64(at, f.oob.predictions[r], true);
    view.setUint32(at, f.trees.length, true);
    view.setUint32(at + 4, 0, true);
    at += 8;
    for (const t of f.trees) at = writeTree(view, at, t);
  };
  return { length: size, write };
}

/** Reads bytes written by serializeForest (this version or version 2); throws EngineInputError for anything else. */
export function deserializeForest(bytes: Uint8Array): Forest {
  const bad = (why: string): EngineInputError => new EngineInputError(msg.notAForest(why));
  const version = openFormat(bytes, MAGIC, [FOREST_FORMAT_VERSION, FOREST_FORMAT_V2], 16, bad);
  // views need their arrays at multiples of 8 in memory: bytes that start elsewhere are copied once
  const data = version === FOREST_FORMAT_VERSION && bytes.byteOffset % 8 !== 0 ? bytes.slice() : bytes;
  const view = new DataView(data.buffer, data.byteOffset, data.byteLength);
  const headerLength = view.getUint32(12, true);
  let at = 16;
  const need = (k: number): void => {
    if (at + k > data.length) throw bad('it ends early (truncated?)');
  };
  need(headerLength);
  let header: Header;
  try {
    header = JSON.parse(new TextDecoder('utf-8', { fatal: true }).decode(data.subarray(at, at + headerLength))) as Header;
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
  const current = version === FOREST_FORMAT_VERSION;
  if (current) at = aligned(at);
  need(8 * p + 8 + 8 * n + (current ? 8 : 4));
  let importance: Float64Array;
  let predictions: Float64Array;
  let r2: number;
  let trees: Tree[];
  if (current) {
    importance = new Float64Array(data.buffer, data.byteOffset + at, p);
    r2 = view.getFloat64(at + 8 * p, true);
    predictions = new Float64Array(data.buffer, data.byteOffset + at + 8 * p + 8, n);
    at += 8 * p + 8 + 8 * n;
    const treeCount = view.getUint32(at, true);
    const read = readTrees(data, at + 8, treeCount, p, bad);
    trees = read.trees;
    at = read.at;
  } else {
    const width = header.featureWidth;
    if (width !== 2 && width !== 4) throw bad('unknown feature index width');
    importance = new Float64Array(p);
    for (let j = 0; j < p; j++, at += 8) importance[j] = view.getFloat64(at, true);
    r2 = view.getFloat64(at, true);
    at += 8;
    predictions = new Float64Array(n);
    for (let r = 0; r < n; r++, at += 8) predictions[r] = view.getFloat64(at, true);
    const treeCount = view.getUint32(at, true);
    at += 4;
    trees = [];
    for (let k = 0; k < treeCount; k++) {
      const read = readTreeV2(view, at, p, width, k, bad);
      trees.push(read.tree);
      at = read.at;
    }
  }
  if (at !== data.length) throw bad(`${data.length - at} unexpected bytes after the last tree`);
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
 * Checks that `bytes` are at least `minLength` long and start with `magic` and one of `versions`
 * (u32 after the magic); returns the version. `bad` makes the error.
 */
function openFormat(bytes: Uint8Array, magic: string, versions: number[], minLength: number, bad: (why: string) => Error): number {
  if (bytes.length < minLength) throw bad('too short');
  for (let i = 0; i < 8; i++) if (bytes[i] !== magic.charCodeAt(i)) throw bad('the magic header is missing');
  const found = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength).getUint32(8, true);
  if (!versions.includes(found)) throw bad(`format version ${found}, this build reads version ${versions[0]}`);
  return found;
}

/** Bytes one tree takes: its node count and a zero, then per node an f64 and two i32. */
function treeSize(t: Tree): number {
  return 8 + 16 * t.feature.length;
}

/** Writes one tree at `at` (see the layout above); returns where the next thing goes. */
function writeTree(view: DataView, at: number, t: Tree): number {
  const count = t.feature.length;
  view.setUint32(at, count, true);
  view.setUint32(at + 4, 0, true);
  at += 8;
  for (let i = 0; i < count; i++, at += 8) view.setFloat64(at, t.thresholdOrValue[i], true);
  for (let i = 0; i < count; i++, at += 4) view.setInt32(at, t.feature[i], true);
  for (let i = 0; i < count; i++, at += 4) view.setInt32(at, t.draws[i], true);
  return at;
}

/**
 * Reads `count` trees written by writeTree from `at` on, as views of `data` (whose bytes start at a
 * multiple of 8 in memory, and `at` is one too), with their right children rebuilt into one new
 * array; `bad` makes the error for bytes that are not trees of `p` features.
 */
function readTrees(data: Uint8Array, at: number, count: number, p: number, bad: (why: string) => Error): { trees: Tree[]; at: number } {
  const view = new DataView(data.buffer, data.byteOffset, data.byteLength);
  const starts: number[] = [];
  let nodes = 0;
  for (let k = 0; k < count; k++) {
    if (at + 8 > data.length) throw bad('it ends early (truncated?)');
    const c = view.getUint32(at, true);
    if (at + 8 + 16 * c > data.length) throw bad('it ends early (truncated?)');
    starts.push(at);
    nodes += c;
    at += 8 + 16 * c;
  }
  const rights = new Int32Array(nodes);
  const trees: Tree[] = [];
  let used = 0;
  for (let k = 0; k < count; k++) {
    const from = data.byteOffset + starts[k];
    const c = view.getUint32(starts[k], true);
    const feature = new Int32Array(data.buffer, from + 8 + 8 * c, c);
    const draws = new Int32Array(data.buffer, from + 8 + 12 * c, c);
    for (let i = 0; i < c; i++) {
      if (feature[i] < -1 || feature[i] >= p) throw bad(`tree ${k} node ${i} splits on feature ${feature[i]} of ${p}`);
      // an i32 below 0 was a u32 above 2^31 - 1
      if (draws[i] < 0) throw bad(`tree ${k} node ${i} has ${draws[i] >>> 0} draws`);
    }
    const right = rightChildren(feature, rights.subarray(used, used + c));
    if (typeof right === 'string') throw bad(`tree ${k} ${right}`);
    used += c;
    trees.push({ feature, thresholdOrValue: new Float64Array(data.buffer, from + 8, c), right, draws });
  }
  return { trees, at };
}

/** Reads tree number `k` of a version 2 forest at `at`, into new arrays; `bad` makes the error for bytes that are not one. */
function readTreeV2(view: DataView, at: number, p: number, width: 2 | 4, k: number, bad: (why: string) => Error): { tree: Tree; at: number } {
  const need = (n: number): void => {
    if (at + n > view.byteLength) throw bad('it ends early (truncated?)');
  };
  need(4);
  const count = view.getUint32(at, true);
  at += 4;
  need(count * (width + 12));
  // one allocation per tree, not four
  const memory = new ArrayBuffer(count * 20);
  const t: Tree = {
    thresholdOrValue: new Float64Array(memory, 0, count),
    feature: new Int32Array(memory, 8 * count, count),
    right: new Int32Array(memory, 12 * count, count),
    draws: new Int32Array(memory, 16 * count, count),
  };
  for (let i = 0; i < count; i++, at += width) {
    const feat = width === 2 ? view.getInt16(at, true) : view.getInt32(at, true);
    if (feat < -1 || feat >= p) throw bad(`tree ${k} node ${i} splits on feature ${feat} of ${p}`);
    t.feature[i] = feat;
  }
  for (let i = 0; i < count; i++, at += 8) t.thresholdOrValue[i] = view.getFloat64(at, true);
  const right = rightChildren(t.feature, t.right);
  if (typeof right === 'string') throw bad(`tree ${k} ${right}`);
  for (let i = 0; i < count; i++, at += 4) {
    const w = view.getUint32(at, true);
    if (w > 0x7fffffff) throw bad(`tree ${k} node ${i} has ${w} draws`);
    t.draws[i] = w;
  }
  return { tree: t, at };
}

const BLOCKS_MAGIC = 'DNDRBLKS';
export const BLOCKS_FORMAT_VERSION = 3;

/**
 * Blocks of forest trees (growForestBlocks) as bytes, round-tripping bit for bit. Layout
 * (little-endian): 8 bytes magic "DNDRBLKS", u32 format version (3), u32 training rows n, u32
 * features p, u32 block count, u32 zero; then per block: u32 block index, u32 zero, f64 × p
 * importance sums, f64 × n out-of-bag sums, u8 × n out-of-bag counts, zeros up to a multiple of 8,
 * u32 tree count, u32 zero and the trees as in a forest (read as views of the bytes in the same way).
 *
 * Example: `deserializeBlocks(serializeBlocks(blocks, n, p))` equals `blocks`.
 */
export function serializeBlocks(blocks: ForestBlock[], rows: number, features: number): Uint8Array {
  let size = 32;
  for (const b of blocks) {
    size += aligned(8 + 8 * features + 9 * rows) + 8;
    for (const t of b.trees) size += treeSize(t);
  }
  const out = new Uint8Array(size);
  const view = new DataView(out.buffer);
  for (let i = 0; i < 8; i++) out[i] = BLOCKS_MAGIC.charCodeAt(i);
  view.setUint32(8, BLOCKS_FORMAT_VERSION, true);
  view.setUint32(12, rows, true);
  view.setUint32(16, features, true);
  view.setUint32(20, blocks.length, true);
  let at = 32;
  for (const b of blocks) {
    view.setUint32(at, b.index, true);
    at += 8;
    for (let f = 0; f < features; f++, at += 8) view.setFloat64(at, b.impSum[f], true);
    for (let r = 0; r < rows; r++, at += 8) view.setFloat64(at, b.oobSum[r], true);
    out.set(b.oobCount, at);
    at = aligned(at + rows);
    view.setUint32(at, b.trees.length, true);
    at += 8;
    for (const t of b.trees) at = writeTree(view, at, t);
  }
  return out;
}

/** Reads bytes written by serializeBlocks; throws EngineInputError for anything else. */
export function deserializeBlocks(bytes: Uint8Array): ForestBlock[] {
  const bad = (why: string): EngineInputError => new EngineInputError(msg.notBlocks(why));
  openFormat(bytes, BLOCKS_MAGIC, [BLOCKS_FORMAT_VERSION], 32, bad);
  const data = bytes.byteOffset % 8 !== 0 ? bytes.slice() : bytes;
  const view = new DataView(data.buffer, data.byteOffset, data.byteLength);
  const rows = view.getUint32(12, true);
  const features = view.getUint32(16, true);
  const count = view.getUint32(20, true);
  let at = 32;
  const need = (n: number): void => {
    if (at + n > data.length) throw bad('it ends early (truncated?)');
  };
  const blocks: ForestBlock[] = [];
  for (let k = 0; k < count; k++) {
    need(aligned(8 + 8 * features + 9 * rows) + 8);
    const index = view.getUint32(at, true);
    at += 8;
    const impSum = new Float64Array(features);
    for (let f = 0; f < features; f++, at += 8) impSum[f] = view.getFloat64(at, true);
    const oobSum = new Float64Array(rows);
    for (let r = 0; r < rows; r++, at += 8) oobSum[r] = view.getFloat64(at, true);
    const oobCount = data.slice(at, at + rows);
    at = aligned(at + rows);
    const treeCount = view.getUint32(at, true);
    const read = readTrees(data, at + 8, treeCount, features, bad);
    at = read.at;
    blocks.push({ index, trees: read.trees, oobSum, oobCount, impSum });
  }
  if (at !== data.length) throw bad(`${data.length - at} unexpected bytes after the last block`);
  return blocks;
}
