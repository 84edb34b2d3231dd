import { relative, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { DendrologError, isFileSystemRefusal, messages } from '../core/messages.js';
import { notesOnly, streamProgress } from './progress.js';
import { COMMAND_HELP, GENERAL_HELP } from './cli-help.js';
import { planListing } from './plan-listing.js';
import { cacheCheck, cacheInfo, cachePrune } from './cache-admin.js';
import { Cache } from './cache.js';
import { RUN_FILES } from './run-files.js';
import { displayOf } from './paths.js';
import { cacheFromEnvironment, DEFAULT_CACHE, defaultWorkers, runRecipe } from './run.js';
import { closest } from '../core/suggest.js';
import { verifyRun } from './verify.js';
import { compareManifests, comparisonMarkdown } from './compare.js';
import { predictRun } from './predict.js';
import { readManifest } from './run-folder.js';
import { CHECK_ROWS } from './check-data.js';
import { check as checkRecipe } from './api.js';
import { SLURM_SETTINGS, slurmOptions, type SlurmOptions } from './slurm.js';
import { runTask } from './task.js';


const COMMANDS = ['run', 'check', 'plan', 'verify', 'compare', 'predict', 'cache', 'task'];

/**
 * Entry point: parses arguments, runs the command, prints errors as one line each, returns the exit code.
 *
 * Example: `await main(['check', 'recipes/lake-chlorophyll/lake-chlorophyll.yaml'])` returns 0 for a good recipe.
 */
export async function main(argv: string[]): Promise<number> {
  const out = process.stdout;
  const err = process.stderr;
  let json = false;
  try {
    const [command, ...rest] = argv;
    if (command === 'help' && rest.length > 0) {
      const topic = rest[0];
      if (!Object.hasOwn(COMMAND_HELP, topic)) throw new DendrologError(messages.usageUnknownCommand(topic, closest(topic, Object.keys(COMMAND_HELP))), 2);
      out.write(COMMAND_HELP[topic]);
      return 0;
    }
    if (!command || command === '--help' || command === '-h' || command === 'help') {
      out.write(GENERAL_HELP);
      return command ? 0 : 2;
    }
    if (command === '--version') {
      out.write(`${(await import('./environment.js')).environment().dendrolog}\n`);
      return 0;
    }
    if (!COMMANDS.includes(command)) throw new DendrologError(messages.usageUnknownCommand(command, closest(command, COMMANDS)), 2);
    if (rest.includes('--help') || rest.includes('-h')) {
      out.write(Object.hasOwn(COMMAND_HELP, command) ? COMMAND_HELP[command] : GENERAL_HELP);
      return 0;
    }
    json = rest.includes('--json');
    if (command === 'task') {
      // what a Slurm array task runs (not listed in --help: dendrolog writes this command itself)
      const { positionals } = parse(rest, {}, command);
      const index = Number(positionals[1]);
      if (positionals.length !== 2 || !Number.isInteger(index) || index < 0) throw new DendrologError(messages.usageMissingArgument('a batch file and a task index', command), 2);
      return await runTask(positionals[0], index);
    }
    if (command === 'check') {
      const { positionals } = parse(rest, { json: { type: 'boolean' } }, command);
      const recipe = onePositional(positionals, command);
      // the recipe, then its data, cheaply: columns present and the first rows of the declared types
      const { sources: n, models } = await checkRecipe(recipe);
      const line = `${recipe}: ok (${n} source${n === 1 ? '' : 's'}, the first ${CHECK_ROWS.toLocaleString('en-US')} rows of each read with the declared types; ${models} models)\n`;
      if (json) {
        err.write(line);
        out.write(JSON.stringify({ ok: true, recipe, sources: n, models, rowsChecked: CHECK_ROWS }, null, 2) + '\n');
      } else out.write(line);
      return 0;
    }
    if (command === 'plan') {
      const { values, positionals } = parse(rest, { cache: { type: 'string' }, json: { type: 'boolean' } }, command);
      const recipe = onePositional(positionals, command);
      const listing = planListing(recipe, (values.cache as string | undefined) ?? cacheFromEnvironment() ?? DEFAULT_CACHE);
      const cached = listing.steps.filter((st) => st.cached).length;
      const summary = `${listing.steps.length} steps: ${cached} in the cache, ${listing.steps.length - cached} to run\n`;
      if (json) {
        err.write(summary);
        out.write(JSON.stringify({ recipe, cache: listing.cache, steps: listing.steps }, null, 2) + '\n');
      } else {
        out.write(listing.steps.map((st) => `${st.cached ? 'cached' : 'to run'}  ${st.key.slice(0, 12)}  ${st.id}\n`).join('') + summary);
      }
      return 0;
    }
    if (command === 'cache') {
      return cacheCommand(rest, out, err);
    }
    if (command === 'verify') {
      const { values, positionals } = parse(rest, { workers: { type: 'string' }, quiet: { type: 'boolean' }, json: { type: 'boolean' }, ...EXECUTOR_OPTIONS }, command);
      const folder = onePositional(positionals, command, 'a run folder');
      const result = await verifyRun(folder, { workers: workersOf(values.workers), progress: values.quiet ? notesOnly(err) : streamProgress(err), slurm: executorOf(values) });
      if (json) {
        err.write(result.lines.join('\n') + '\n');
        out.write(JSON.stringify({ reproduced: result.reproduced, folder, lines: result.lines }, null, 2) + '\n');
      } else out.write(result.lines.join('\n') + '\n');
      return result.reproduced ? 0 : 1;
    }
    if (command === 'compare') {
      const { values, positionals } = parse(rest, { format: { type: 'string' }, json: { type: 'boolean' } }, command);
      if (positionals.length !== 2) throw new DendrologError(messages.usageMissingArgument('two run folders, the old then the new', command), 2);
      const format = (values.format as string | undefined) ?? (json ? 'json' : 'markdown');
      if (json && format !== 'json') throw new DendrologError(messages.usageOptionValue('--format', format, '"json" together with --json'), 2);
      if (format !== 'markdown' && format !== 'json') throw new DendrologError(messages.usageOptionValue('--format', format, '"markdown" or "json"'), 2);
      const [a, b] = positionals.map((p) => readManifest(p));
      const comparison = compareManifests(a, b);
      out.write(format === 'json' ? JSON.stringify(comparison, null, 2) + '\n' : comparisonMarkdown(comparison, positionals[0], positionals[1]));
      return 0;
    }
    if (command === 'predict') {
      const { values, positionals } = parse(rest, { out: { type: 'string' }, model: { type: 'string' } }, command);
      if (positionals.length !== 2) throw new DendrologError(messages.usageMissingArgument('a run folder and a data file', command), 2);
      if (!values.out) throw new DendrologError(messages.usageMissingArgument('--out PREDICTIONS.csv', command), 2);
      if (values.model === '') throw new DendrologError(messages.usageOptionValue('--model', '', "the name of one of the run's models"), 2);
      const s = await predictRun(positionals[0], positionals[1], values.out as string, { model: values.model as string | undefined });
      // with the predictions on stdout, the summary goes to stderr
      (values.out === '-' ? err : out).write(
        `${s.predicted} of ${s.rows} rows predicted, ${s.notPredicted} not (reasons in the file), ${s.outsideRange} with a predictor outside the training range\n` +
          (s.model === s.headline ? `model: ${s.model}, the one the run chose\n` : `model: ${s.model}, not the one the run chose (${s.headline})\n`) +
          (s.intervalLevel !== null ? `each prediction has its ${+(100 * s.intervalLevel).toFixed(2)}% prediction interval (low_ and high_ columns; see the run's report for its measured coverage)\n` : '') +
          (s.skippedSteps.length ? `the file has no target, so these steps that need it were skipped: ${s.skippedSteps.join(', ')}\n` : '') +
          warningLines(s.warnings) +
          `Predictions: ${s.out === '-' ? 'written to stdout' : s.out}\n`,
      );
      return 0;
    }
    const { values, positionals } = parse(
      rest,
      { out: { type: 'string' }, cache: { type: 'string' }, 'no-cache': { type: 'boolean' }, workers: { type: 'string' }, quiet: { type: 'boolean' }, json: { type: 'boolean' }, ...EXECUTOR_OPTIONS },
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
      // with --json, stdout holds the one JSON document: the lines a person reads go to stderr
      progress: values.quiet ? notesOnly(json ? err : out) : streamProgress(json ? err : out),
      slurm: executorOf(values),
    });
    const where = relative(process.cwd(), result.outDir) || '.';
    const warnings = result.manifest.warnings;
    const w = warnings.length;
    // each warning in full, not only its count: a reader of the console should not need the report for them
    const seconds = (performance.now() - t0) / 1000;
    (json ? err : out).write(
      `\nReport: ${where}/report.html\nSummary: ${where}/summary.md\nRun record: ${where}/run-record.json\n` +
        warningLines(warnings) +
        `${w} warning${w === 1 ? '' : 's'}; finished in ${seconds.toFixed(1)} s\n`,
    );
    if (json) {
      const m = result.manifest;
      out.write(
        JSON.stringify(
          {
            ok: true,
            folder: where,
            files: Object.fromEntries(Object.entries(RUN_FILES).map(([k, f]) => [k, `${where}/${f}`])),
            headline: { model: m.headline.model, metric: m.headline.metric, value: m.headline.value, measuredOn: m.headline.label },
            warnings: warnings.map((x) => ({ code: x.code, message: x.message, count: x.count })),
            steps: { total: m.steps.length, cached: m.timing.steps.filter((x) => x.status === 'cached').length },
            seconds: Number(seconds.toFixed(3)),
          },
          null,
          2,
        ) + '\n',
      );
    }
    return 0;
  } catch (e) {
    if (e instanceof DendrologError) {
      err.write(`${e.message}\n`);
      // the one JSON document a script waits for, even on failure
      if (json) out.write(JSON.stringify({ ok: false, exitCode: e.exitCode, problems: e.message.split('\n') }, null, 2) + '\n');
      return e.exitCode;
    }
    // the file system refusing (full disk, no permission, a folder where a file should be) is the
    // machine's state, not a bug: say which file and what to do
    const sys = e as NodeJS.ErrnoException;
    const failure = (message: string) => {
      if (json) out.write(JSON.stringify({ ok: false, exitCode: 1, problems: [message] }, null, 2) + '\n');
    };
    if (sys && typeof sys.code === 'string' && typeof sys.path === 'string' && isFileSystemRefusal(sys.code)) {
      const message = messages.fileSystemRefused(sys.code, sys.syscall ?? 'use', displayOf(resolve(sys.path)));
      err.write(`${message}\n`);
      failure(message);
      return 1;
    }
    err.write(`dendrolog: unexpected internal error; please report it with the recipe that caused it\n${(e as Error).stack ?? e}\n`);
    failure(`dendrolog: unexpected internal error: ${(e as Error).message}`);
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

/** `dendrolog cache [info|verify|prune]`: the cache's size, its entries checked, or pruned by a rule. */
function cacheCommand(rest: string[], out: { write(s: string): unknown }, err: { write(s: string): unknown }): number {
  const { values, positionals } = parse(
    rest,
    { cache: { type: 'string' }, json: { type: 'boolean' }, 'unused-by': { type: 'string' }, 'older-than': { type: 'string' }, 'dry-run': { type: 'boolean' } },
    'cache',
  );
  const sub = positionals[0] ?? 'info';
  if (positionals.length > 1) throw new DendrologError(messages.usageTooManyArguments('cache', 'one of info, verify, prune', positionals), 2);
  const cache = new Cache(resolve((values.cache as string | undefined) ?? cacheFromEnvironment() ?? DEFAULT_CACHE));
  const where = displayOf(cache.dir);
  const mib = (b: number) => `${(b / 2 ** 20).toFixed(1)} MiB`;
  if (sub === 'info') {
    const info = cacheInfo(cache);
    if (values.json) {
      out.write(JSON.stringify({ ...info, dir: where }, null, 2) + '\n');
      return 0;
    }
    out.write(info.kinds.map((k) => `${k.kind.padEnd(20)} ${String(k.entries).padStart(7)} ${k.entries === 1 ? 'entry  ' : 'entries'}  ${mib(k.bytes).padStart(11)}\n`).join(''));
    out.write(`${where}: ${info.entries} ${info.entries === 1 ? 'entry' : 'entries'}, ${mib(info.bytes)}\n`);
    return 0;
  }
  if (sub === 'verify') {
    const { checked, bad } = cacheCheck(cache);
    for (const b of bad) err.write(`${displayOf(b.path)} ${b.problem}\n`);
    out.write(`${where}: ${checked} entries read, ${bad.length} bad${bad.length ? ' (a run discards and recomputes them; "cache prune" does not pick them out)' : ''}\n`);
    return bad.length ? 1 : 0;
  }
  if (sub === 'prune') {
    const given = values['older-than'] as string | undefined;
    const days = given === undefined ? undefined : given.trim() === '' ? Number.NaN : Number(given);
    if (days !== undefined && (!Number.isFinite(days) || days < 0)) throw new DendrologError(messages.usageOptionValue('--older-than', String(values['older-than']), 'a number of days, 0 or more'), 2);
    const unusedBy = values['unused-by'] as string | undefined;
    const r = cachePrune(cache, { unusedBy: unusedBy === undefined ? undefined : resolve(unusedBy), olderThanDays: days, dryRun: Boolean(values['dry-run']) });
    if (values['dry-run']) for (const f of r.removed) out.write(`would remove ${displayOf(f.path)}\n`);
    out.write(`${where}: ${values['dry-run'] ? 'would remove' : 'removed'} ${r.removed.length} entries (${mib(r.bytes)}), kept ${r.kept}\n`);
    return 0;
  }
  throw new DendrologError(messages.cacheSubcommand(sub), 2);
}
