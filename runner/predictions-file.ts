import { randomBytes } from 'node:crypto';
import { closeSync, lstatSync, openSync, readSync, realpathSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { DendrologError, messages } from '../core/messages.js';
import { displayOf, isInside } from './paths.js';

/** What predict reads, and so must never write over. */
export interface PredictInputs {
  /** The run folder: every file in it stays as the run wrote it. */
  folder: string;
  /** The data file being predicted. */
  data: string;
  /** The run's recipe and source files. */
  runInputs: string[];
}

/**
 * Stops with exit code 2 before predict would write its predictions over anything it reads or
 * over the run folder, also when `out` reaches them through a linked folder or is a hard link to
 * them. An existing file is replaced only when predict wrote it (its header says so), so rerunning
 * predict replaces its own output and nothing else. `out` itself may not be a link.
 *
 * Example: `checkPredictionsTarget('pred.csv', {folder: 'out/lake', data: 'new.csv', runInputs: ['lake.yaml']})`
 */
export function checkPredictionsTarget(out: string, inputs: PredictInputs): void {
  const abs = resolve(out);
  const st = lstatSync(abs, { throwIfNoEntry: false });
  if (st && !st.isFile()) throw new DendrologError(messages.predictionsNotAFile(out), 2);
  // checked before any work, and named as the user wrote it rather than as the temporary file
  const parent = statSync(dirname(abs), { throwIfNoEntry: false });
  if (!parent?.isDirectory()) throw new DendrologError(messages.predictionsFolderMissing(out, displayOf(dirname(abs))), 2);
  const real = realPathOf(abs);
  const isSameFile = (p: string) => {
    const other = statSync(p, { throwIfNoEntry: false });
    return (st !== undefined && other !== undefined && other.dev === st.dev && other.ino === st.ino) || realPathOf(resolve(p)) === real;
  };
  if (isSameFile(inputs.data)) throw new DendrologError(messages.predictionsOverInput(out), 2);
  const folder = realPathOf(resolve(inputs.folder));
  if (isInside(folder, real, true)) {
    throw new DendrologError(messages.predictionsIntoRunFolder(out, displayOf(resolve(inputs.folder))), 2);
  }
  for (const p of inputs.runInputs) if (isSameFile(p)) throw new DendrologError(messages.predictionsOverRunInput(out, displayOf(resolve(p))), 2);
  if (st && !writtenByPredict(abs)) throw new DendrologError(messages.predictionsOverOtherFile(out), 2);
}

/**
 * Writes text to path through a temporary file beside it and a rename, so an interrupted predict
 * leaves the previous file whole, and a hard link at path is replaced rather than written through.
 */
export function replaceFile(path: string, text: string): void {
  const tmp = join(dirname(path), `.${basename(path)}.writing-${process.pid}-${randomBytes(4).toString('hex')}`);
  try {
    writeFileSync(tmp, text, { flag: 'wx' });
    renameSync(tmp, path);
  } catch (e) {
    rmSync(tmp, { force: true });
    throw e;
  }
}

/** The last header fields predict writes; a file whose first line ends so was written by predict. */
const PREDICT_HEADER_END = /(^|,)input_row,"?predicted_.*,outside_training_range,not_predicted_because\r?$/;

function writtenByPredict(path: string): boolean {
  const fd = openSync(path, 'r');
  try {
    const head = Buffer.alloc(65536);
    const text = head.subarray(0, readSync(fd, head, 0, head.length, 0)).toString('utf8');
    const end = text.indexOf('\n');
    return end >= 0 && PREDICT_HEADER_END.test(text.slice(0, end));
  } finally {
    closeSync(fd);
  }
}

/** The path with every link resolved, for the part of it that exists. */
function realPathOf(abs: string): string {
  const rest: string[] = [];
  let head = abs;
  for (;;) {
    try {
      return join(realpathSync(head), ...rest);
    } catch {
      if (dirname(head) === head) return abs;
      rest.unshift(basename(head));
      head = dirname(head);
    }
  }
}
