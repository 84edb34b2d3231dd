/**
 * Load benchmark: 5 million rows × 12 columns as CSV and as Parquet, each loaded through the real
 * source step in its own child process, which reports the time and its peak resident memory
 * (maxRSS). The target is a peak under 3× the size of the typed columns; it is measured and printed,
 * never asserted. Generating the files is not timed.
 *
 * Run: npm run bench:load   (or: npm run build && node dist/test/bench/load-bench.js [rows])
 */
import { spawnSync } from 'node:child_process';
import { closeSync, mkdtempSync, openSync, rmSync, statSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parquetWriteFile } from 'hyparquet-writer';
import type { Frame } from '../../core/frame.js';
import type { ColumnType } from '../../core/recipe-types.js';
import { makeContext, type FrameOutput } from '../../core/step-types.js';
import { source, type SourceParams } from '../../steps/source.js';

const COLUMNS: Record<string, ColumnType> = {
  station: 'category',
  day: 'date',
  ...Object.fromEntries(Array.from({ length: 10 }, (_, i) => [`x${i + 1}`, 'number' as ColumnType])),
};

/** A small, fast, seeded generator (mulberry32): the benchmark's data are the same on every run. */
function generator(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

const DAY = 86_400_000;
const START = Date.UTC(2000, 0, 1);

/** Row i's values: a station code with leading zeros, a day, and ten numbers with a few missing. */
function rowValues(rand: () => number, i: number): { station: string; day: number; x: (number | null)[] } {
  const station = String(Math.floor(rand() * 500)).padStart(5, '0');
  const day = START + (i % 7300) * DAY;
  const x = Array.from({ length: 10 }, (_, k) => (rand() < 0.01 ? null : Math.round((rand() * 1000 - 200) * 10 ** (k % 4)) / 10 ** (k % 4)));
  return { station, day, x };
}

function writeCsv(path: string, rows: number): void {
  const rand = generator(42);
  const fd = openSync(path, 'w');
  writeSync(fd, Object.keys(COLUMNS).join(',') + '\n');
  let buf: string[] = [];
  for (let i = 0; i < rows; i++) {
    const r = rowValues(rand, i);
    buf.push(`${r.station},${new Date(r.day).toISOString().slice(0, 10)},${r.x.map((v) => (v === null ? 'NA' : v)).join(',')}`);
    if (buf.length === 100_000) {
      writeSync(fd, buf.join('\n') + '\n');
      buf = [];
    }
  }
  if (buf.length > 0) writeSync(fd, buf.join('\n') + '\n');
  closeSync(fd);
}

function writeParquetFile(path: string, rows: number): void {
  const rand = generator(42);
  const station: string[] = new Array(rows);
  const day: Date[] = new Array(rows);
  const x = Array.from({ length: 10 }, () => new Array<number | null>(rows));
  for (let i = 0; i < rows; i++) {
    const r = rowValues(rand, i);
    station[i] = r.station;
    day[i] = new Date(r.day);
    for (let k = 0; k < 10; k++) x[k][i] = r.x[k];
  }
  parquetWriteFile({
    filename: path,
    rowGroupSize: 500_000,
    columnData: [
      { name: 'station', data: station, type: 'STRING' },
      { name: 'day', data: day, type: 'TIMESTAMP' },
      ...x.map((data, k) => ({ name: `x${k + 1}`, data, type: 'DOUBLE' as const, nullable: true })),
    ],
  });
}

/** Bytes the typed columns hold: 8 per number, 8 per text value (a reference) plus each distinct string once. */
function typedBytes(frame: Frame): number {
  let bytes = 0;
  for (const c of frame.columns) {
    if (c.values instanceof Float64Array) bytes += c.values.length * 8;
    else {
      bytes += c.values.length * 8;
      for (const s of new Set(c.values)) bytes += s ? s.length * 2 : 0;
    }
  }
  return bytes;
}

/** In the child: load one file through the source step and report time and memory as JSON. */
async function child(format: 'csv' | 'parquet', path: string): Promise<void> {
  const baseline = process.memoryUsage().rss;
  const params: SourceParams = { sha256: 'bench', format, columns: COLUMNS, missing: ['', 'NA'] };
  const ctx = makeContext({ key: 'bench', seed: 1, seedKey: 'bench', locator: { path, display: path, file: path } }, { warn: () => {}, workers: 1 });
  const t0 = performance.now();
  const out = (await source.run([], params, ctx)) as FrameOutput;
  const seconds = (performance.now() - t0) / 1000;
  const report = { seconds, rows: out.frame.rows, maxRssBytes: process.resourceUsage().maxRSS * 1024, baselineRssBytes: baseline, typedBytes: typedBytes(out.frame) };
  process.stdout.write(JSON.stringify(report) + '\n');
}

const mb = (b: number) => `${(b / 2 ** 20).toFixed(0)} MiB`;

async function parent(rows: number): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), 'dendrolog-load-bench-'));
  try {
    const csv = join(dir, 'table.csv');
    const pq = join(dir, 'table.parquet');
    console.log(`load benchmark: ${rows.toLocaleString('en')} rows × ${Object.keys(COLUMNS).length} columns (1 category, 1 date, 10 numbers), Node ${process.version}`);
    writeCsv(csv, rows);
    writeParquetFile(pq, rows);
    for (const [format, path] of [['csv', csv], ['parquet', pq]] as const) {
      const self = fileURLToPath(import.meta.url);
      const r = spawnSync(process.execPath, [self, '--child', format, path], { encoding: 'utf8', maxBuffer: 1 << 20 });
      if (r.status !== 0) {
        console.log(`${format}: the load failed: ${r.stderr.trim().split('\n').slice(-3).join(' ')}`);
        continue;
      }
      const m = JSON.parse(r.stdout.trim().split('\n').pop()!) as { seconds: number; rows: number; maxRssBytes: number; baselineRssBytes: number; typedBytes: number };
      const ratio = m.maxRssBytes / m.typedBytes;
      const added = (m.maxRssBytes - m.baselineRssBytes) / m.typedBytes;
      console.log(
        `${format.padEnd(7)} file ${mb(statSync(path).size).padStart(9)}  load ${m.seconds.toFixed(1).padStart(5)} s  ` +
          `peak RSS ${mb(m.maxRssBytes).padStart(9)} (process before loading ${mb(m.baselineRssBytes)})  typed columns ${mb(m.typedBytes)}  ` +
          `peak/typed ${ratio.toFixed(2)}× (target < 3×: ${ratio < 3 ? 'met' : 'not met'}; growth over the process before loading ${added.toFixed(2)}×)`,
      );
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[2] === '--child') await child(process.argv[3] as 'csv' | 'parquet', process.argv[4]);
else await parent(Number(process.argv[2] ?? 5_000_000));
