import { relative, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { DendrologError, isFileSystemRefusal, messages } from '../core/messages.js';
import { streamProgress } from './progress.js';
import { loadRecipe } from './recipe.js';
import { displayOf } from './paths.js';
import { DEFAULT_CACHE, defaultWorkers, runRecipe } from './run.js';
import { closest } from '../core/suggest.js';
import { verifyRun } from './verify.js';
import { compareManifests, comparisonMarkdown } from './compare.js';
import { predictRun } from './predict.js';
import { readManifest } from './run-folder.js';
import { SLURM_SETTINGS, slurmOptions, type SlurmOptions } from './slurm.js';
import { runTask } from './task.js';

const HELP = `dendrolog — run a tree and forest regression recipe and write an audit report

Usage:
  dendrolog run RECIPE [--out DIR] [--cache DIR] [--no-cache] [--workers N] [--executor local|slurm]
  dendrolog check RECIPE
  dendrolog verify RUN_FOLDER [--workers N] [--executor local|slurm]
  dendrolog compare OLD_RUN_FOLDER NEW_RUN_FOLDER [--format markdown|json]
  dendrolog predict RUN_FOLDER DATA_FILE --out PREDICTIONS.csv
  dendrolog --help | --version

Commands:
  run     plan the recipe's steps, take unchanged ones from the cache, run the rest,
          and write report.html, summary.md, run-record.json, model.dendro and predictions.csv
  check   validate the recipe (schema, names, expressions, source files) without running it
  verify  rerun a run folder's recipe from its sources with an empty cache and say
          "reproduced", or name the first step that differs and the likely cause
  compare what changed between two runs (recipe, data, choices, metrics, importance,
          warnings), as Markdown for a pull request or as JSON
  predict apply a run's cleaning, features and headline model to new data; one output
          line per input row, in order, with a reason where no prediction is possible

Options for run:
  --out DIR      output folder (default: <recipe folder>/<report.folder>/<recipe name>)
  --cache DIR    cache folder (default: ${DEFAULT_CACHE} under the current folder)
  --no-cache     neither read nor write the cache
  --workers N    threads for cross-validation folds, final fits and trees (default: the number of
                 cores); results are identical for any N

Options for run and verify on a Slurm cluster (see the README's cluster section); each may
instead be set by the environment variable in brackets, and the option wins:
  --executor local|slurm    where folds, final fits and explanations run (default local);
                            with slurm, as Slurm job arrays: the cache (and for verify the
                            current folder) must be on a file system every node shares;
                            outputs are identical to a local run
  --slurm-partition P       partition                        [DENDROLOG_SLURM_PARTITION]
  --slurm-time T            time per task, e.g. 2:00:00      [DENDROLOG_SLURM_TIME]
  --slurm-mem M             memory per task, e.g. 8G         [DENDROLOG_SLURM_MEM]
  --slurm-account A         account                          [DENDROLOG_SLURM_ACCOUNT]
  --slurm-max-running N     tasks of one array at once       [DENDROLOG_SLURM_MAX_RUNNING]
  --slurm-cpus N            cores per task (default 1)       [DENDROLOG_SLURM_CPUS]
  --slurm-steps-per-task N  steps each task runs (default 1) [DENDROLOG_SLURM_STEPS_PER_TASK]
  --slurm-trees-per-task N  trees of a final forest per task [DENDROLOG_SLURM_TREES_PER_TASK]

Exit codes:
  0  success (verify: reproduced)
  1  the analysis failed (bad data, a step error; verify: not reproduced)
  2  bad usage or a bad recipe
`;

const COMMANDS = ['run', 'check', 'verify', 'compare', 'predict', 'task'];

/**
 * Entry point: parses arguments, runs the command, prints errors as one line each, returns the exit code.
 *
 * Example: `await main(['check', 'recipes/lake-chlorophyll/lake-chlorophyll.yaml'])` returns 0 for a good recipe.
 */
export async function main(argv: string[]): Promise<number> {
  const out = process.stdout;
  const err = process.stderr;
  try {
    const [command, ...rest] = argv;
    if (!command || command === '--help' || command === '-h' || command === 'help') {
      out.write(HELP);
      return command ? 0 : 2;
    }
    if (command === '--version') {
      out.write(`${(await import('./environment.js')).environment().dendrolog}\n`);
      return 0;
    }
    if (!COMMANDS.includes(command)) throw new DendrologError(messages.usageUnknownCommand(command, closest(command, COMMANDS)), 2);
    if (rest.includes('--help') || rest.includes('-h')) {
      out.write(HELP);
      return 0;
    }
    if (command === 'task') {
      // what a Slurm array task runs (not listed in --help: dendrolog writes this command itself)
      const { positionals } = parse(rest, {}, command);
      const index = Number(positionals[1]);
      if (positionals.length !== 2 || !Number.isInteger(index) || index < 0) throw new DendrologError(messages.usageMissingArgument('a batch file and a task index', command), 2);
      return await runTask(positionals[0], index);
    }
    if (command === 'check') {
      const { positionals } = parse(rest, {}, command);
      const recipe = onePositional(positionals, command);
      const { recipe: r } = loadRecipe(recipe, { checkFiles: true });
      out.write(`${recipe}: ok (${Object.keys(r.sources).length} sources, ${Object.keys(r.models).length} models)\n`);
      return 0;
    }
    if (command === 'verify') {
      const { values, positionals } = parse(rest, { workers: { type: 'string' }, ...EXECUTOR_OPTIONS }, command);
      const folder = onePositional(positionals, command, 'a run folder');
      const result = await verifyRun(folder, { workers: workersOf(values.workers), progress: streamProgress(err), slurm: executorOf(values) });
      out.write(result.lines.join('\n') + '\n');
      return result.reproduced ? 0 : 1;
    }
    if (command === 'compare') {
      const { values, positionals } = parse(rest, { format: { type: 'string' } }, command);
      if (positionals.length !== 2) throw new DendrologError(messages.usageMissingArgument('two run folders, the old then the new', command), 2);
      const format = (values.format as string | undefined) ?? 'markdown';
      if (format !== 'markdown' && format !== 'json') throw new DendrologError(messages.usageOptionValue('--format', format, '"markdown" or "json"'), 2);
      const [a, b] = positionals.map((p) => readManifest(p));
      const comparison = compareManifests(a, b);
      out.write(format === 'json' ? JSON.stringify(comparison, null, 2) + '\n' : comparisonMarkdown(comparison, positionals[0], positionals[1]));
      return 0;
    }
    if (command === 'predict') {
      const { values, positionals } = parse(rest, { out: { type: 'string' } }, command);
      if (positionals.length !== 2) throw new DendrologError(messages.usageMissingArgument('a run folder and a data file', command), 2);
      if (!values.out) throw new DendrologError(messages.usageMissingArgument('--out PREDICTIONS.csv', command), 2);
      const s = await predictRun(positionals[0], positionals[1], values.out as string);
      out.write(
        `${s.predicted} of ${s.rows} rows predicted, ${s.notPredicted} not (reasons in the file), ${s.outsideRange} with a predictor outside the training range\n` +
          (s.intervalLevel !== null ? `each prediction has its ${+(100 * s.intervalLevel).toFixed(2)}% prediction interval (low_ and high_ columns; see the run's report for its measured coverage)\n` : '') +
          (s.skippedSteps.length ? `the file has no target, so these steps that need it were skipped: ${s.skippedSteps.join(', ')}\n` : '') +
          warningLines(s.warnings) +
          `Predictions: ${s.out}\n`,
      );
      return 0;
    }
    const { values, positionals } = parse(
      rest,
      { out: { type: 'string' }, cache: { type: 'string' }, 'no-cache': { type: 'boolean' }, workers: { type: 'string' }, ...EXECUTOR_OPTIONS },
      command,
    );
    const recipe = onePositional(positionals, command);
    const workers = workersOf(values.workers);
    const t0 = performance.now();
    const result = await runRecipe(recipe, {
      out: values.out as string | undefined,
      cache: values.cache as string | undefined,
      noCache: Boolean(values['no-cache']),
      workers,
      progress: streamProgress(out),
      slurm: executorOf(values),
    });
    const where = relative(process.cwd(), result.outDir) || '.';
    const warnings = result.manifest.warnings;
    const w = warnings.length;
    // each warning in full, not only its count: a reader of the console should not need the report for them
    out.write(
      `\nReport: ${where}/report.html\nSummary: ${where}/summary.md\nRun record: ${where}/run-record.json\n` +
        warningLines(warnings) +
        `${w} warning${w === 1 ? '' : 's'}; finished in ${((performance.now() - t0) / 1000).toFixed(1)} s\n`,
    );
    return 0;
  } catch (e) {
    if (e instanceof DendrologError) {
      err.write(`${e.message}\n`);
      return e.exitCode;
    }
    // the file system refusing (full disk, no permission, a folder where a file should be) is the
    // machine's state, not a bug: say which file and what to do
    const sys = e as NodeJS.ErrnoException;
    if (sys && typeof sys.code === 'string' && typeof sys.path === 'string' && isFileSystemRefusal(sys.code)) {
      err.write(`${messages.fileSystemRefused(sys.code, sys.syscall ?? 'use', displayOf(resolve(sys.path)))}\n`);
      return 1;
    }
    err.write(`dendrolog: unexpected internal error; please report it with the recipe that caused it\n${(e as Error).stack ?? e}\n`);
    return 1;
  }
}

type OptionSpec = Record<string, { type: 'string' | 'boolean' }>;

/** --executor and the Slurm options, for run and verify. */
const EXECUTOR_OPTIONS: OptionSpec = {
  executor: { type: 'string' },
  ...Object.fromEntries(SLURM_SETTINGS.map((s) => [s.option, { type: 'string' as const }])),
};

/** The Slurm options when --executor slurm, else undefined; Slurm options without it are refused. */
function executorOf(values: Record<string, string | boolean | undefined>): SlurmOptions | undefined {
  const executor = (values.executor as string | undefined) ?? 'local';
  if (executor !== 'local' && executor !== 'slurm') throw new DendrologError(messages.usageOptionValue('--executor', executor, '"local" or "slurm"'), 2);
  if (executor === 'local') {
    const stray = SLURM_SETTINGS.find((s) => values[s.option] !== undefined);
    if (stray) throw new DendrologError(messages.usageOptionValue(`--${stray.option}`, String(values[stray.option]), 'to be given with --executor slurm'), 2);
    return undefined;
  }
  return slurmOptions(values);
}

function parse(
  args: string[],
  options: OptionSpec,
  command: string,
): { values: Record<string, string | boolean | undefined>; positionals: string[] } {
  try {
    const r = parseArgs({ args, options, allowPositionals: true, strict: true });
    return { values: r.values as Record<string, string | boolean | undefined>, positionals: r.positionals };
  } catch (e) {
    const m = /'(--?[^']+)'/.exec((e as Error).message);
    if (m && /Unknown option/.test((e as Error).message)) throw new DendrologError(messages.usageUnknownOption(m[1], command), 2);
    throw new DendrologError(messages.usageOptionNeedsValue((e as Error).message, command), 2);
  }
}

function onePositional(positionals: string[], command: string, what = 'a recipe file'): string {
  if (positionals.length === 0) throw new DendrologError(messages.usageMissingArgument(what, command), 2);
  if (positionals.length > 1) {
    throw new DendrologError(messages.usageTooManyArguments(command, what, positionals), 2);
  }
  return positionals[0];
}

/** --workers: default the number of cores; results are identical for any value. */
function workersOf(value: string | boolean | undefined): number {
  if (value === undefined) return defaultWorkers();
  const workers = Number(value);
  if (!Number.isInteger(workers) || workers < 1 || workers > 256) {
    throw new DendrologError(messages.usageOptionValue('--workers', String(value), 'a whole number from 1 to 256'), 2);
  }
  return workers;
}

/** One line per warning, with how often it came when more than once. */
function warningLines(warnings: { message: string; count: number }[]): string {
  return warnings.map((w) => `warning: ${w.message}${w.count > 1 ? ` (×${w.count})` : ''}\n`).join('');
}
