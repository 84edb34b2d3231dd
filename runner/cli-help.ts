import { DEFAULT_CACHE } from './run.js';
import { table } from '../core/dict.js';

const SLURM_OPTIONS = `Options for run and verify on a Slurm cluster (see the README's cluster section); each may
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
  --slurm-trees-per-task N  trees of a final forest per task [DENDROLOG_SLURM_TREES_PER_TASK]`;

const EXIT_CODES = `Exit codes:
  0  success (verify: reproduced)
  1  the analysis failed (bad data, a step error; verify: not reproduced)
  2  bad usage or a bad recipe`;

const CACHE_OPTION = `  --cache DIR    cache folder (default: $DENDROLOG_CACHE, else ${DEFAULT_CACHE} under the current folder)`;

/** `dendrolog --help`: every command in a line or two, the shared options, the exit codes. */
export const GENERAL_HELP = `dendrolog — run a tree and forest regression recipe and write an audit report

Usage:
  dendrolog run RECIPE [--out DIR] [--cache DIR] [--no-cache] [--workers N] [--quiet] [--json] [--executor local|slurm]
  dendrolog check RECIPE [--json]
  dendrolog plan RECIPE [--cache DIR] [--json]
  dendrolog verify RUN_FOLDER [--workers N] [--quiet] [--json] [--executor local|slurm]
  dendrolog compare OLD_RUN_FOLDER NEW_RUN_FOLDER [--json]
  dendrolog predict RUN_FOLDER DATA_FILE --out PREDICTIONS.csv|- [--model NAME]
  dendrolog cache [info|verify|prune] [--cache DIR] ...
  dendrolog help COMMAND | --help | --version

Commands:
  run     plan the recipe's steps, take unchanged ones from the cache, run the rest,
          and write report.html, summary.md, run-record.json, model.dendro and predictions.csv
  check   validate the recipe (schema, names, expressions) and open its source files: declared
          columns present, the first 1,000 rows of each parsed with the declared types
  plan    list every step a run would take, with its key and whether the cache holds it
  verify  rerun a run folder's recipe from its sources with an empty cache and say
          "reproduced", or name the first step that differs and the likely cause
  compare what changed between two runs: a verdict per model, then recipe, data, importance
          and warnings, as Markdown for a pull request or as JSON
  predict apply a run's cleaning, features and headline model (or --model NAME) to new data;
          one output line per input row, in order, with a reason where no prediction is possible
  cache   the cache's size by step kind; check its entries; remove what no run needs

"dendrolog help COMMAND" shows a command's options and examples.

Options for run:
  --out DIR      output folder (default: <recipe folder>/<report.folder>/<recipe name>)
${CACHE_OPTION}
  --no-cache     neither read nor write the cache
  --workers N    threads for cross-validation folds, final fits and trees (default: the number of
                 cores); results are identical for any N
  --quiet        no line per step; the warnings and where the report is are still printed
  --json         one JSON document on stdout (what was written, the headline, the warnings);
                 the lines a person reads go to stderr

${SLURM_OPTIONS}

${EXIT_CODES}
`;

/** `dendrolog help COMMAND` and `dendrolog COMMAND --help`: what it does, its options, examples. */
export const COMMAND_HELP: Readonly<Record<string, string>> = table({
  run: `dendrolog run RECIPE [--out DIR] [--cache DIR] [--no-cache] [--workers N] [--quiet] [--json] [--executor local|slurm ...]

Plans the recipe's steps, takes each unchanged step from the cache, runs the rest, and writes the
run folder: report.html, summary.md, run-record.json, model.dendro and predictions.csv. Prints one
line per step (ran or cached, with its time), every warning in full, and where the report is.

Options:
  --out DIR      the run folder (default: <recipe folder>/<report.folder>/<recipe name>); only a
                 folder dendrolog wrote, or an empty one, is replaced
${CACHE_OPTION}
  --no-cache     neither read nor write the cache
  --workers N    threads (default: the number of cores); results are identical for any N
  --quiet        no line per step
  --json         one JSON document on stdout; the lines a person reads go to stderr

${SLURM_OPTIONS}

Examples:
  dendrolog run analysis/lake.yaml
  dendrolog run analysis/lake.yaml --out review/lake-2026-12 --workers 4
  DENDROLOG_CACHE=/scratch/me/dendrolog-cache dendrolog run analysis/lake.yaml --json > run.json

${EXIT_CODES}
`,
  check: `dendrolog check RECIPE [--json]

Checks a recipe without running it: its schema, names, expressions and types along the steps,
then opens every source: the declared columns must be in the file (for NetCDF, the variables and
dimensions), and the first 1,000 rows must parse with the declared types. A problem with a column
names both the data file's line and the recipe line that declares the column.

Options:
  --json         one JSON document on stdout: {"ok": true, ...} or {"ok": false, "problems": [...]}

Examples:
  dendrolog check analysis/lake.yaml
  dendrolog check analysis/lake.yaml --json

${EXIT_CODES}
`,
  plan: `dendrolog plan RECIPE [--cache DIR] [--json]

Lists every step a run of the recipe would take, in order, with the first characters of its key
and whether the cache already holds its output ("cached") or the run would compute it ("to run").
Reads the sources (their hashes are in the keys) but fits nothing and writes nothing.

Options:
${CACHE_OPTION}
  --json         the steps as one JSON document

Examples:
  dendrolog plan analysis/lake.yaml
  dendrolog plan analysis/lake.yaml --json | jq '[.steps[] | select(.cached | not)] | length'

${EXIT_CODES}
`,
  verify: `dendrolog verify RUN_FOLDER [--workers N] [--quiet] [--json] [--executor local|slurm ...]

Reruns the recipe a run folder records, from its sources, with an empty cache, and compares every
step's output hash, every metric, the holdout predictions and the model file with the run record.
Says "reproduced", or names the first step that differs and the likely cause (a changed source,
recipe or software). Also reports files of the run folder edited or deleted after the run.

Options:
  --workers N    threads (default: the number of cores)
  --quiet        no line per step
  --json         one JSON document on stdout: {"reproduced": ..., "lines": [...]}

Examples:
  dendrolog verify analysis/out/lake
  dendrolog verify analysis/out/lake --json

${EXIT_CODES}
`,
  compare: `dendrolog compare OLD_RUN_FOLDER NEW_RUN_FOLDER [--json]

Says what changed between two runs: first its verdict (whether both held out the same rows, and
per model whether each holdout score moved within or beyond the old run's 90% interval), then the
holdout units that moved, the recipe changes as a diff of its YAML, data changes, importance ranks
and warnings. Markdown for a pull-request comment, or JSON.

Options:
  --json             the comparison as one JSON document (the same as --format json)
  --format markdown|json

Examples:
  dendrolog compare analysis/out/lake analysis/out/lake-deeper > compare.md
  dendrolog compare analysis/out/lake analysis/out/lake-deeper --json

${EXIT_CODES}
`,
  predict: `dendrolog predict RUN_FOLDER DATA_FILE --out PREDICTIONS.csv|- [--model NAME]

Applies the run's cleaning, derived features, learned feature values and headline model to a new
file shaped like the main source; --model uses another model the run fitted (every model of the
recipe is in the run's model.dendro, with its own learned features and prediction intervals). Every input row gets one output line, in input order: the input's
columns, the prediction, the predictors outside the training range, and for a row that cannot be
predicted, the reason. "--out -" writes the CSV to stdout (the summary then goes to stderr).

Options:
  --out FILE|-   where the predictions go; "-" for stdout
  --model NAME   a model of the recipe other than the headline (the one the run chose)

Examples:
  dendrolog predict analysis/out/lake data/new-samples.csv --out predictions.csv
  dendrolog predict analysis/out/lake data/new-samples.csv --out - | head
  dendrolog predict analysis/out/lake data/new-samples.csv --out linear.csv --model linear

${EXIT_CODES}
`,
  cache: `dendrolog cache [info] [--cache DIR] [--json]
dendrolog cache verify [--cache DIR]
dendrolog cache prune [--cache DIR] [--unused-by PATH] [--older-than DAYS] [--dry-run]

info    the cache's size and entry count per step kind
verify  reads every entry and checks its checksum and key; names the ones that fail (a run
        discards and recomputes those by itself)
prune   removes entries: with --unused-by PATH, those that no run record under PATH (searched
        recursively) lists; with --older-than DAYS, those not written for that many days; with
        both, only entries that are both. Only entry files dendrolog wrote are ever removed.
        --dry-run lists what would go.

Options:
${CACHE_OPTION}

Examples:
  dendrolog cache
  dendrolog cache prune --unused-by analysis/ --dry-run
  dendrolog cache prune --older-than 90

${EXIT_CODES}
`,
});
