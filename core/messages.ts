/**
 * Every message dendrolog shows a user, as functions named for the failure.
 * Each quotes the bad value, says where it is, and says what to do.
 * Tests compare against these functions, never against copied strings.
 */
import { table } from './dict.js';

/** An error meant for the user: message is complete, exitCode says whose fault it was. */
export class DendrologError extends Error {
  /** 2: bad usage or bad recipe; 1: the analysis failed. */
  readonly exitCode: 1 | 2;
  /** The declared column the problem is about, when it is about one: check adds where the recipe declares it. */
  readonly column?: string;
  constructor(message: string, exitCode: 1 | 2, column?: string) {
    super(message);
    this.name = 'DendrologError';
    this.exitCode = exitCode;
    if (column !== undefined) this.column = column;
  }
}

/** Several recipe problems found at once, one line each. */
export class RecipeErrors extends DendrologError {
  readonly problems: string[];
  constructor(problems: string[]) {
    // a recipe with thousands of problems still prints a screenful; the first ones are the ones to fix
    const more = problems.length - LIST_LIMIT;
    super(problems.slice(0, LIST_LIMIT).join('\n') + (more > 0 ? `\n… and ${more.toLocaleString('en-US')} more problems` : ''), 2);
    this.problems = problems;
  }
}

/** Longest text a message quotes from data or a recipe before shortening it. */
export const QUOTE_LIMIT = 200;
/** Most items a message lists before saying how many more there are. */
export const LIST_LIMIT = 20;

/** A value quoted as JSON; text longer than QUOTE_LIMIT is cut and says how much was left out. */
const q = (v: unknown): string => {
  const s = JSON.stringify(v) ?? String(v);
  return s.length <= QUOTE_LIMIT ? s : `${s.slice(0, QUOTE_LIMIT)}… (${(s.length - QUOTE_LIMIT).toLocaleString('en-US')} more characters)`;
};

/**
 * The first LIST_LIMIT items joined, then how many more, so a file with 10,000 columns or a
 * category with 10,000 levels still gives a one-line message.
 *
 * Example: `listed(['a', 'b'])` is `'a, b'`; 25 items give the first 20 and `"… and 5 more"`.
 */
export function listed(items: readonly string[], sep = ', '): string {
  const shown = items.slice(0, LIST_LIMIT).map((x) => (x.length <= QUOTE_LIMIT ? x : `${x.slice(0, QUOTE_LIMIT)}…`));
  const more = items.length - shown.length;
  return shown.join(sep) + (more > 0 ? `${sep}… and ${more.toLocaleString('en-US')} more` : '');
}
/** Plain words for the file-system error codes a cache or output write meets. */
const FS_WHY = new Map([
  ['ENOSPC', 'the disk is full'],
  ['EDQUOT', 'the disk quota is used up'],
  ['EACCES', 'permission denied'],
  ['EPERM', 'operation not permitted'],
  ['EROFS', 'the file system is read-only'],
  ['ENOTDIR', 'part of the path is a file, not a folder'],
  ['EEXIST', 'a file stands where a folder should be'],
  ['EISDIR', 'a folder stands where a file should be'],
  ['EIO', 'the device reported an input/output error'],
]);
const hexByte = (b: number): string => b.toString(16).toUpperCase().padStart(2, '0');

/** What each file-system refusal means for the user, and what to do about it. */
const FILE_SYSTEM_ADVICE: Readonly<Record<string, string>> = table({
  ENOSPC: 'the disk is full; free some space',
  EDQUOT: 'your disk quota is used up; free some space',
  EACCES: 'no permission; check the owner and mode of the file or its folder',
  EPERM: 'not permitted; check the owner and mode of the file or its folder',
  EROFS: 'the file system is read-only; write somewhere else',
  EISDIR: 'it is a folder where a file is expected; give the path of a file',
  ENOTDIR: 'a part of the path is a file where a folder is expected; check the path',
  ENOENT: 'it does not exist; check the path',
  EMFILE: 'too many files are open; close some programs or raise the limit (ulimit -n)',
  ENFILE: 'the system has too many files open; try again later',
  EBUSY: 'it is busy; close what uses it',
  ENAMETOOLONG: 'the path is too long; use a shorter one',
  ELOOP: 'symbolic links loop; check the links on the path',
  EIO: 'the disk reported an input/output error; check the disk',
});

/** Whether a system error code describes the machine's state (a full disk, a missing permission) rather than a bug. */
export function isFileSystemRefusal(code: string): boolean {
  return Object.hasOwn(FILE_SYSTEM_ADVICE, code);
}

export const messages = {
  // --- usage
  usageUnknownCommand: (cmd: string, suggestion?: string) =>
    `unknown command ${q(cmd)}${suggestion ? `; did you mean ${q(suggestion)}?` : ''}; run "dendrolog --help" for the commands`,
  usageUnknownOption: (opt: string, cmd: string) =>
    `unknown option ${q(opt)} for "dendrolog ${cmd}"; run "dendrolog ${cmd} --help" for its options`,
  usageMissingArgument: (what: string, cmd: string) =>
    `"dendrolog ${cmd}" needs ${what}; run "dendrolog ${cmd} --help" for an example`,
  usageOptionValue: (opt: string, value: string, expected: string) =>
    `option ${opt} got ${q(value)}; expected ${expected}`,
  usageOptionNeedsValue: (detail: string, cmd: string) => `${detail}; run "dendrolog ${cmd} --help" for its options`,
  usageTooManyArguments: (cmd: string, what: string, got: string[]) =>
    `"dendrolog ${cmd}" takes ${what}, but got ${got.length} arguments: ${listed(got, ' ')}`,
  dataFileMissing: (path: string) => `${path}: no such data file; give the path of a file shaped like the recipe's main source`,
  dataFileNotAFile: (path: string) => `${path}: is a folder or other non-file; give the path of a data file shaped like the recipe's main source`,
  recipeIsFolder: (path: string, yamls: string[]) =>
    `${path} is a folder; give the recipe file inside it` + (yamls.length ? ` (it holds ${listed(yamls.map((y) => q(y)))})` : ', such as recipes/lake-chlorophyll/lake-chlorophyll.yaml'),
  recipeFileMissing: (path: string) =>
    `${path}: no such recipe file; give the path of a recipe file, any .yaml name (for example recipes/lake-chlorophyll/lake-chlorophyll.yaml)`,

  // --- recipe syntax and schema (each prefixed by file:line:column by the caller)
  yamlSyntax: (detail: string) => `YAML syntax error: ${detail}; fix the YAML at this position`,
  yamlDuplicateKey: (key: string) => `key ${q(key)} appears twice in the same mapping; keep one of them`,
  recipeTooLarge: (file: string, bytes: number, limit: number) =>
    `${file}: the recipe is ${bytes.toLocaleString('en')} bytes, more than the limit of ${limit.toLocaleString('en')} bytes (1 MiB); a recipe describes an analysis, so keep data in source files and the recipe short`,
  recipeNotUtf8: (file: string, line: number, offset: number, byte: number) =>
    `${file}:${line}: byte 0x${hexByte(byte)} at byte offset ${offset} is not valid UTF-8; a recipe must be UTF-8 text: save it as UTF-8`,
  unknownKey: (key: string, where: string, suggestion: string | undefined, allowed: string[]) =>
    `unknown key ${q(key)} in ${where}` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : `; allowed keys are ${listed(allowed)}`),
  missingKey: (key: string, where: string) => `${where} needs the key ${q(key)}; add it`,
  wrongType: (where: string, expected: string, got: unknown) =>
    `${where} must be ${expected}, but is ${q(got)}; change the value`,
  notInList: (where: string, got: unknown, allowed: unknown[], suggestion?: string) =>
    `${where} is ${q(got)}, which is not one of ${listed(allowed.map((a) => q(a)))}` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : ''),
  outOfRange: (where: string, got: unknown, rule: string) => `${where} is ${q(got)}, but it must be ${rule}`,
  badSlug: (where: string, got: unknown) =>
    `${where} is ${q(got)}; use lowercase letters, digits and dashes only, starting with a letter or digit`,
  badSha256: (where: string, got: unknown) =>
    `${where} is ${q(got)}; give the 64 lowercase hex digits of the SHA-256 (sha256sum prints it)`,
  badName: (name: string, where: string, dashes: boolean) =>
    `${q(name)} is not allowed as a name in ${where}; use letters, digits${dashes ? ', underscores and dashes' : ' and underscores'}, starting with a letter or underscore`,
  controlCharacter: (where: string, code: number) =>
    `${where} holds the control character U+${code.toString(16).toUpperCase().padStart(4, '0')}, which would reach the report and summary as an invisible or terminal-controlling byte; remove it`,
  listRepeats: (where: string) => `${where} lists the same value twice; remove the repeat`,
  emptyMapping: (where: string) => `${where} is empty; give at least one entry`,
  oneStepPerItem: (where: string) => `${where} holds more than one step; give each step its own list item ("- ")`,
  emptyText: (where: string) => `${where} is empty; give a value`,
  textTooLong: (where: string, limit: number) => `${where} is longer than ${limit} characters; shorten it`,
  schemaOther: (where: string, detail: string) => `${where}: ${detail}`,
  recipeNumberNotFinite: (where: string, value: number) =>
    `${where} is ${Number.isNaN(value) ? '.nan (not a number)' : `${value > 0 ? '' : 'minus '}infinity as YAML reads it (${value > 0 ? '' : '-'}.inf, or a literal beyond ±1.8e308 such as 1e309, which a 64-bit float cannot hold)`}; write a finite number`,
  unsupportedVersion: (got: unknown) =>
    `dendrolog: ${q(got)} is not a recipe format this version reads; this version reads format 1 (write "dendrolog: 1")`,

  // --- recipe meaning (checked after the schema)
  sourcePathEscapes: (file: string) =>
    `source file ${q(file)} leaves the recipe's folder; keep data inside the folder tree of the recipe (copy it there; a link that leads out is refused too)`,
  sourceFileMissing: (file: string, resolved: string) =>
    `source file ${q(file)} was not found (looked for ${resolved}); check the path, which is relative to the recipe`,
  sourceNotAFile: (file: string, resolved: string, isFolder: boolean) =>
    `source file ${q(file)} is ${isFolder ? 'a folder' : 'not a regular file'} (${resolved}); give the path of the data file itself, relative to the recipe`,
  sourceHashMismatch: (file: string, pinned: string, actual: string) =>
    `source file ${q(file)} has SHA-256 ${actual}, but the recipe pins ${pinned}; the data changed: restore the pinned file, or update the sha256 if the change is intended`,
  unknownSource: (name: string, known: string[], suggestion?: string) =>
    `no source named ${q(name)}` + (suggestion ? `; did you mean ${q(suggestion)}?` : `; the sources are ${listed(known)}`),
  unknownColumn: (column: string, step: string, known: string[], suggestion?: string) =>
    `${step} names column ${q(column)}, which does not exist at that step` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : `; the columns are ${listed(known)}`),
  expressionCompile: (expr: string, detail: string) =>
    `expression ${q(expr)} does not compile: ${detail}; write an arquero expression over d.column_name, for example "d.depth_m <= 2"`,
  expressionWholeTable: (expr: string, fn: string, family: 'aggregate' | 'window') =>
    `expression ${q(expr)} calls the ${family} function op.${fn}, which reads every row of the table, holdout rows included: test rows would leak into the features, and a row's value would depend on which other rows are in the file; ` +
    `write an expression over the row's own values, and leave statistics learned from the training rows to a learned feature step (impute, standardize)`,
  expressionNotRepeatable: (expr: string, fn: string) =>
    `expression ${q(expr)} calls op.${fn}${fn === 'random' || fn === 'now' ? '' : ' without arguments'}, whose value changes from run to run, so a rerun would not reproduce the analysis; use the row's own values (a date column, or a fixed date such as op.datetime(2024, 0, 1))`,
  expressionNotAValue: (step: string, expr: string, what: string, row: number) =>
    `${step}: expression ${q(expr)} gives ${what} in row ${row}, not a number, text or date (op.match, for example, gives a list); take one element, such as op.match(d.site, /(\\d+)/, 1)`,
  expressionTimeout: (step: string, expr: string, seconds: number, variable: string) =>
    `${step}: expression ${q(expr)} did not finish within its time budget of ${Math.round(seconds * 10) / 10} s (a regular expression that backtracks catastrophically, such as /(a+)+$/, does this); ` +
    `simplify the expression, or raise the budget's base with the environment variable ${variable} (seconds) if it is meant to be this slow`,
  expressionFailed: (step: string, expr: string, detail: string) =>
    `${step}: expression ${q(expr)} failed while evaluating: ${detail}; change the expression so that every row's result stays small (string lengths, repeat counts, nesting)`,
  expressionTextTooLong: (step: string, expr: string, chars: number, limit: number, what: string) =>
    `${step}: expression ${q(expr)} gives ${chars} characters of text in ${what}, more than the limit of ${limit}; check the counts given to op.repeat, op.padstart or op.padend`,
  expressionBudgetValue: (variable: string, value: string) =>
    `environment variable ${variable} is ${q(value)}; give the expression time budget in seconds, a number above 0 such as 30, or unset it for the default`,
  keepRowsNotBoolean: (step: string, expr: string, example: string, count: number, rows: number) =>
    `${step}: expression ${q(expr)} must give true or false for each row, but ${count} of ${rows} rows give something else, the first ${example}; ` +
    `write a condition, for example "d.x1 > 0" or "d.site == 'S1'" (rows where it is missing are dropped)`,
  expressionReservedColumn: (column: string, step: string) =>
    `${step} reads or makes a column named ${q(column)}, a name the expression language cannot hold; leave it out of expressions (other steps may use it), or name the column differently in the source`,
  duplicateColumn: (column: string, step: string) =>
    `${step} would create column ${q(column)}, which already exists; choose another name`,
  predictorIsTarget: (column: string) =>
    `the target ${q(column)} is also listed as a predictor; remove it from predictors`,
  learnedNotPredictor: (column: string, step: string) =>
    `${step} works on column ${q(column)}, which is not a predictor; learned feature steps change only what the models see, so add ${q(column)} to predictors or remove it from the step`,
  categoryPredictorNeedsEncoding: (column: string) =>
    `predictor ${q(column)} is text, which a model cannot use directly; add "- one_hot: {column: ${column}}" under features, or remove it from predictors`,
  targetNotNumber: (column: string, type: string) =>
    `the target ${q(column)} is declared as ${type}; a regression target must be a number column`,
  gridTooLarge: (cells: number, limit: number) =>
    `the models' grids have ${cells} cells in all, more than the limit of ${limit}; shrink the grids, or raise evaluation.max_cells if you mean it`,
  withinInverted: (step: string, min: number, max: number) =>
    `${step} keeps values from min ${min} to max ${max}, but min is above max, so every row would be dropped; swap them`,
  groupsNeeded: (where: string) =>
    `${where} splits by groups, but the recipe has no "groups" column; add "groups: <column>" or split at random`,
  rowKeyNotUnique: (columns: string[], rows: number) =>
    `${rows} modelling rows share their row_key (${columns.join(', ')}) with another row; they are told apart by their other values, so an edit to one of them can swap it with its twin between training and holdout; add a column to row_key that tells them apart, or remove the duplicates (deduplicate)`,
  blocksNeeded: (where: string) =>
    `${where} splits by spatial blocks, but the recipe declares none; add "blocks: {x: <column>, y: <column>, size: <side>}" or split another way`,
  blockCoordinateNotNumber: (column: string, type: string) =>
    `the block coordinate ${q(column)} is declared as ${type}; coordinates must be number columns (projected, e.g. metres east and north)`,
  blockCoordinateMissing: (column: string, rows: number) =>
    `the block coordinate ${q(column)} has ${rows} missing or non-finite values among the modelling rows, and a row without a place has no block; drop them with "drop_missing: [${column}]", or fill them in the data`,
  timeNeeded: (where: string) =>
    `${where} splits by time, but the recipe has no "time" column; add "time: <column>" or split another way`,

  // --- data
  columnNotInFile: (file: string, column: string, header: string[], suggestion?: string) =>
    `${file}: declared column ${q(column)} is not in the file's header` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : `; the header has ${listed(header)}`),
  csvFieldCount: (file: string, line: number, expected: number, got: number) =>
    `${file}:${line}: row has ${got} fields, but the header has ${expected}; fix the row (a stray delimiter or an unquoted comma?)`,
  csvUnterminatedQuote: (file: string, line: number) =>
    `${file}:${line}: a quoted field starts here and is never closed; add the closing quote`,
  csvEmpty: (file: string) => `${file}: the file is empty; it needs a header row`,
  cachePruneNeedsRule: () =>
    'cache prune needs --unused-by PATH (entries no run record under PATH lists), --older-than DAYS, or both; nothing was removed',
  cachePruneNotAFolder: (path: string) =>
    `--unused-by ${path}: no such folder; give the folder under which the run folders to keep lie (their run-record.json files are searched for); nothing was removed`,
  cachePruneNoRecords: (path: string) =>
    `--unused-by ${path}: no run record (run-record.json) lies under this folder, so every entry would count as unused; give the folder that holds your run folders; nothing was removed`,
  cacheSubcommand: (given: string) => `cache has no "${given}"; use "cache info", "cache verify" or "cache prune"`,
  declaredAt: (problem: string, column: string, where: string) => `${problem} (${q(column)} is declared at ${where})`,
  sourceNoRows: (file: string, detail: string) =>
    `${file}: ${detail}, so there is nothing to analyse; add the data rows, or check that the source names the right file`,
  textNotDecodable: (file: string, line: number, offset: number, byte: number, encoding: string, declared: boolean, utf16?: 'utf-16le' | 'utf-16be') =>
    `${file}:${line}: byte 0x${hexByte(byte)} at byte offset ${offset} is not valid ${encoding} text; ` +
    (utf16
      ? `the file starts with a UTF-16 byte order mark: declare "encoding: ${utf16}" on the source`
      : declared
      ? `check the source's "encoding" (the file may be in another encoding), or fix the file`
      : `save the file as UTF-8, or declare its encoding on the source (for example "encoding: latin1" or "encoding: windows-1252")`),
  csvDuplicateHeader: (file: string, column: string) =>
    `${file}: the header names column ${q(column)} twice; rename one`,
  valueParse: (file: string, line: number, column: string, value: string, type: string) =>
    `${file}:${line}: column ${q(column)} holds ${q(value)}, which is not a ${type}; fix the value, list it under "missing", or declare the column with another type`,
  csvFieldCountNoHeader: (file: string, line: number, declared: number, got: number) =>
    `${file}:${line}: row has ${got} fields, but the source has no header and declares ${declared} columns (in file order); declare one column per field, or fix the row`,
  undeclaredColumns: (file: string, columns: string[]) =>
    `${file}: the file has columns the recipe does not declare: ${listed(columns)}; declare them under "columns", or set "undeclared: ignore" (leave them out) or "undeclared: text" (read them as text)`,
  declaredColumnMissing: (file: string, column: string, available: string[], suggestion?: string) =>
    `${file}: declared column ${q(column)} is not among the file's columns` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : `; the file has ${listed(available)}`),
  valueParseAt: (file: string, where: string, column: string, value: string, type: string) =>
    `${file}: ${where}: column ${q(column)} holds ${q(value)}, which is not a ${type}; fix the value, list it under "missing", or declare the column with another type`,
  valueNotFinite: (location: string, column: string, value: string) =>
    `${location}: column ${q(column)} holds ${q(value)}, which is beyond the range of a 64-bit float (about ±1.8e308) and would be read as infinite; fix the value, list it under "missing", or rescale the column`,
  sourceUnreadable: (file: string, format: string, detail: string) =>
    `${file}: could not be read as ${format} (${detail}); check that the file is ${format} and complete, or set "format" on the source`,
  jsonShape: (file: string, detail: string) =>
    `${file}: ${detail}; a JSON source must be an array of records ([{"a": 1, "b": "x"}, ...]) or an object of equally long columns ({"a": [1, ...], "b": ["x", ...]})`,
  netcdfNotNetcdf: (file: string, start: string) =>
    `${file}: is not a NetCDF file (it starts with ${start}); give a NetCDF classic, 64-bit offset or NetCDF-4 file, or set "format" on the source`,
  netcdfTruncated: (file: string, detail: string) =>
    `${file}: the NetCDF file is truncated or damaged (${detail}); copy or download it again`,
  netcdfUnknownVariable: (file: string, variable: string, known: string[], suggestion?: string) =>
    `${file}: has no variable ${q(variable)}` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : '') +
    `; the file's variables are ${listed(known)}`,
  netcdfNotNumeric: (file: string, variable: string, type: string) =>
    `${file}: variable ${q(variable)} holds ${type} values; dendrolog reads numeric NetCDF variables; leave it out of "variables"`,
  netcdfDimensionsDiffer: (file: string, a: string, dimsA: string[], b: string, dimsB: string[]) =>
    `${file}: variables ${q(a)} (${listed(dimsA)}) and ${q(b)} (${listed(dimsB)}) do not share their dimensions, so they cannot be rows of one table; read them as two sources and join them`,
  netcdfUndeclaredDimension: (file: string, variable: string, dimension: string) =>
    `${file}: variable ${q(variable)} runs along dimension ${q(dimension)}, which the source does not declare; add "${dimension}: number" (or date, for a time axis) under "columns"`,
  netcdfDeclaredNotRead: (file: string, column: string, dimensions: string[], variables: string[]) =>
    `${file}: declared column ${q(column)} is neither a dimension (${listed(dimensions)}) nor a variable read (${listed(variables)}); remove it, or add it to "variables"`,
  netcdfTimeUnits: (file: string, variable: string, units: string, why: string) =>
    `${file}: variable ${q(variable)} has time units ${q(units)}, which cannot be decoded (${why}); dendrolog decodes "<days|hours|minutes|seconds> since YYYY-MM-DD[ hh:mm:ss]"; declare the column as number to keep the raw values`,
  netcdfCalendar: (file: string, variable: string, calendar: string) =>
    `${file}: variable ${q(variable)} uses the ${q(calendar)} calendar; dendrolog decodes only the standard (gregorian, proleptic_gregorian) calendar into dates; declare the column as number to keep the raw values`,
  netcdfDimensionValues: (file: string, dimension: string, type: string) =>
    `${file}: dimension ${q(dimension)} is declared as ${type}; declare a coordinate as number, or as date when it has CF time units`,
  netcdfSelectUnknown: (file: string, dimension: string, dimensions: string[]) =>
    `${file}: "select" names ${q(dimension)}, which is not a dimension of the variables read (${listed(dimensions)}); select on one of those`,
  netcdfSelectValue: (dimension: string, value: unknown, expected: string) =>
    `select.${dimension} bound ${q(value)} is not a ${expected}; write it as one, or null for an open side`,
  unknownEncoding: (value: string, suggestion?: string) =>
    `encoding ${q(value)} is not one dendrolog can decode` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : '; use utf-8 (the default), latin1, windows-1252, utf-16le, utf-16be or another WHATWG encoding label'),
  sourceOptionNotForFormat: (option: string, format: string, formats: string) =>
    `"${option}" applies only to ${formats} sources, and this one is read as ${format}; remove it, or set "format"`,
  netcdfVariablesNeeded: () =>
    `a NetCDF source needs "variables", the data variables to read (for example variables: [tas]); each must also be declared under "columns"`,
  netcdfVariableNotDeclared: (variable: string) =>
    `variable ${q(variable)} is not declared under "columns"; add "${variable}: number"`,
  targetAllMissing: (column: string) =>
    `the target ${q(column)} has no values left after cleaning; check the cleaning steps and the missing-value tokens`,
  predictorsAllConstant: (columns: string[]) =>
    `every predictor is constant over the training rows (${listed(columns)}), so no model can learn anything from them; check the cleaning steps and the holdout, or add predictors that vary`,
  predictorConstant: (column: string) =>
    `predictor ${q(column)} has one value over all training rows, so no model can use it; remove it from predictors`,
  linearCollinear: (model: string, columns: string[]) =>
    `model ${q(model)} (linear) left out ${listed(columns, '; ')}: a least-squares fit cannot separate predictors that are linear combinations of others; its predictions are unaffected, but remove the redundant predictors to silence this`,
  modelEngineFailed: (model: string, where: string, detail: string) =>
    `model ${q(model)} could not be fitted (${where}): ${detail}`,
  predictionNotFinite: (value: number, where: string) =>
    `it predicted ${String(value)} for a row of ${where}, which is not a finite number (the target or predictors are too large for float64 arithmetic?)`,
  modelScoreNotFinite: (metric: string, reason: string) =>
    `its cross-validated ${metric} is undefined (${reason}), so it cannot be compared and was not chosen`,
  noModelScored: (metric: string, failures: { model: string; reason: string }[]) =>
    `no model has a defined cross-validated ${metric}, so none can be chosen (${listed(failures.map((f) => `${q(f.model)}: ${f.reason}`), '; ')}); fix the data, or choose by another metric (evaluation.choose_by)`,
  holdoutUnreliable: (what: string) =>
    `the holdout intervals rest on ${what}, too few for any interval to say how much the score varies; read them as unreliable, and use a larger holdout fraction if the data allow`,
  groupsMissing: (column: string, rows: number) =>
    `the groups column ${q(column)} has ${rows} missing values among the modelling rows, and a row without a group cannot be kept on one side of a split; drop them with "drop_missing: [${column}]", or fill them in the data`,
  foldsTooFew: (left: number, unit: 'rows' | 'groups' | 'blocks', heldOut: number, all: number, k: number, needed: number) =>
    `only ${left} training ${unit} remain after the holdout took ${heldOut} of ${all}, but ${k} folds need at least ${needed}; lower evaluation.holdout.fraction, use fewer folds (evaluation.folds.k), or loosen the cleaning steps`,
  timeMissing: (column: string, rows: number) =>
    `the time column ${q(column)} has ${rows} missing values among the modelling rows; drop them with "drop_missing: [${column}]" or split another way`,
  timeTooFewBlocks: (distinct: number, k: number) =>
    `forward time folds need at least ${k + 1} distinct times in the training rows, but there are ${distinct}; use fewer folds`,
  timeGapTooLarge: (gap: number, unit: string, fold: number) =>
    `evaluation.folds.gap is ${gap} ${unit}, which leaves forward time fold ${fold} no earlier training rows; lower the gap below the span of the training times, or use fewer folds`,
  holdoutEmpty: (side: string, fix: string) => `the holdout split left the ${side} set empty; ${fix}`,
  holdoutGroupsBothSides: (by: string, both: number, held: number, groups: string) =>
    `the holdout is split ${by === 'time' ? 'in time' : 'at random'}, so ${both} of its ${held} groups (${groups}) also have training rows: its scores say how well the models predict new ${by === 'time' ? 'times' : 'rows'} of known groups, not new groups; to judge new groups, hold out by groups`,
  missingInPredictor: (column: string, rows: number) =>
    `predictor ${q(column)} has ${rows} missing values in the modelling rows; drop them with "drop_missing" or fill them with an "impute" feature step`,
  tooManyLevels: (column: string, levels: number, limit: number) =>
    `one_hot on ${q(column)} would make ${levels.toLocaleString('en-US')} indicator columns, one per category in the training rows, more than max_levels (${limit.toLocaleString('en-US')}); is it an identifier or free text? leave it out of predictors, group rare categories before dendrolog reads the file, or raise max_levels on the one_hot step if you mean it`,
  unseenCategoryRow: (column: string, value: string) =>
    `${q(column)} is ${q(value)}, a category the training rows never had (set "unseen: other" on its one_hot step to predict such rows)`,
  unseenCategory: (column: string, value: string, known: string[]) =>
    `column ${q(column)} holds category ${q(value)}, which the training rows never had (they had ${listed(known)}); set "unseen: other" on its one_hot step to map it to a shared column, or drop those rows`,

  // --- verify, compare, predict
  notARunFolder: (folder: string) =>
    `${folder} holds no run-record.json, so it is not a dendrolog run folder; give the folder that "dendrolog run" wrote (it prints its path)`,
  oldRunRecordName: (file: string, current: string) =>
    `note: ${file} is the run record's name from an older dendrolog (now ${current}); reading it`,
  oldCacheFolder: (old: string, current: string) =>
    `note: ${old} is the cache folder of an older dendrolog; this version keeps its cache in ${current} and leaves the old one alone: delete ${old} when you no longer need it`,
  manifestUnreadable: (file: string, detail: string) => `${file} is not a readable dendrolog run record (${detail}); rerun the recipe to write a new one`,
  storedRecipeInvalid: (file: string, problems: string[]) =>
    `${file}: the recipe this run record keeps is damaged, so the run cannot be rerun or applied (${listed(problems, '; ')}); run the recipe again to write a new record`,
  predictionsFolderMissing: (out: string, folder: string) =>
    `--out ${out}: the folder ${folder} does not exist; create it first, or write the predictions elsewhere`,
  runFileChanged: (file: string) =>
    `${file} is not the file the run wrote (its SHA-256 differs from the one the run recorded in .dendrolog-run); it was edited or replaced after the run: restore it from version control, or run the recipe again`,
  runFileMissing: (file: string) =>
    `${file}, which the run wrote, is gone from the run folder; restore it from version control, or run the recipe again`,
  modelFileOtherRun: (file: string) =>
    `${file} was written by another run (the holdout predictions it carries are not this run's); copy back this run's own model file, or run the recipe again`,
  outputUnwritable: (folder: string, code: string) =>
    `the run folder ${folder} cannot be written here (${code}: ${FILE_SYSTEM_ADVICE[code] ?? 'see the system error code'}); give --out a folder you can write, nothing was run`,
  recipeOfRunMissing: (file: string) =>
    `the run's recipe ${file} is gone; restore it (the run record keeps its normalized form and SHA-256) or run the recipe again`,
  sourceOfRunMissing: (file: string) => `source file ${file} of the run is gone; restore it to verify the run`,
  modelFileMissing: (folder: string, file: string) =>
    `${folder} has no ${file}; it was written by an older dendrolog or copied without it; run the recipe again`,
  modelFileChanged: (file: string, recorded: string, actual: string) =>
    `${file} has SHA-256 ${actual}, but the run record holds ${recorded}; it is not the model this run wrote (copied from another run, or edited): restore the run's own model file, or run the recipe again`,
  modelFileTruncated: (file: string, bytes: number, recorded: number) =>
    `${file} is ${bytes} bytes, but the run wrote ${recorded}; it is truncated (an interrupted copy?): copy the run folder again, or run the recipe again`,
  modelFileUndecodable: (file: string, detail: string) =>
    `${file} could not be read as a dendrolog model (${detail}); run the recipe again to write a new one`,
  modelFileUnrecorded: (file: string) =>
    `the run record beside ${file} holds no SHA-256 for it (an older dendrolog wrote the run), so the model cannot be checked; run the recipe again`,
  modelNotInRun: (name: string, file: string, names: string[], suggestion: string | undefined) =>
    `--model ${name}: ${file} holds no model of that name${suggestion ? `; did you mean "${suggestion}"?` : '.'} The run fitted ${listed(names.map((n) => `"${n}"`))}; name one of them, or leave out --model for the one it chose`,
  modelFileHeadlineOnly: (name: string, file: string, headline: string) =>
    `--model ${name}: ${file} was written by an older dendrolog and holds the headline model "${headline}" alone; run the recipe again to keep every model it fits`,
  fileSystemRefused: (code: string, syscall: string, path: string) =>
    `${path}: the file system refused to ${syscall} it (${code}: ${FILE_SYSTEM_ADVICE[code] ?? 'see the system error code'}); nothing was lost, fix that and run the command again`,
  // --- warnings (data: collected, merged, counted; in the run record and the report)
  randomSplitWithGroups: (groups: string, what: string) =>
    `the recipe declares groups (${groups}) but ${what} at random; rows of one group on both sides of a split make scores look better than they will be on new groups; split by groups`,
  randomSplitWithTime: (time: string, what: string) =>
    `the recipe declares a time column (${time}) but ${what} at random; neighbouring times on both sides of a split make scores look better than forecasts will be; split by time`,
  gridEdge: (model: string, param: string, value: unknown, values: number[]) =>
    `model "${model}": the chosen ${param} = ${value} is at the edge of its grid (${values.join(', ')}); a value beyond it might score better; widen the grid`,
  outsideTrainingRange: (rows: number, predictor: string) =>
    `${rows} holdout row${rows === 1 ? ' has' : 's have'} ${predictor} outside the training rows' range; there the model extrapolates, and a tree or forest cannot: it predicts as at the nearest edge of the training data`,
  noBetterThanLinear: (best: string, linear: string) =>
    `the chosen model "${best}" does not beat the linear baseline "${linear}"; prefer the simpler model`,
  holdoutNoBetterThanLinear: (best: string, linear: string, skill: number) =>
    `on the holdout, "${best}" does not beat the linear baseline "${linear}" (MSE skill ${skill.toFixed(3)}); the extra complexity buys nothing here`,
  deriveNonFinite: (column: string, expr: string, count: number) =>
    `derived column "${column}" = ${expr} gave ${count} non-finite values (out-of-domain inputs, such as the log of zero); they are treated as missing`,
  joinDuplicateKeys: (source: string, rows: number, on: string[]) =>
    `source "${source}" has ${rows} rows whose ${on.join(', ')} repeats an earlier row; each matching row of the main table was repeated once per partner; make the key unique if that is not intended`,
  // --- cache and output
  cacheCorrupt: (key: string) =>
    `cache entry ${key.slice(0, 12)} failed its checksum (damaged or cut short) and was discarded; the step was recomputed`,
  cacheEntryOtherKey: (step: string, key: string, storedKey: string) =>
    `cache entry ${key.slice(0, 12)} for step ${q(step)} holds the output stored under key ${storedKey.slice(0, 12)} (copied or moved over it), so it was discarded and the step recomputed; nothing to do unless it recurs, then delete the cache folder`,
  cacheEntryOtherCodec: (step: string, key: string, stored: string, expected: string) =>
    `cache entry ${key.slice(0, 12)} for step ${q(step)} is encoded as ${q(stored)}, but the step writes ${q(expected)}, so it was discarded and the step recomputed`,
  cacheEntryUnknownFormat: (step: string, key: string, start: string) =>
    `cache entry ${key.slice(0, 12)} for step ${q(step)} is not in a cache format this dendrolog reads (it starts with ${q(start)}), so it was discarded and the step recomputed`,
  cacheEntryUndecodable: (step: string, key: string, detail: string) =>
    `cache entry ${key.slice(0, 12)} for step ${q(step)} passed its checksum but could not be decoded (${detail}), so it was discarded and the step recomputed`,
  clusterNeedsCache: () =>
    'the Slurm executor hands steps to cluster tasks through the cache, so it cannot run with --no-cache; drop --no-cache and give a --cache folder on a file system every node shares',
  clusterCommandMissing: (command: string, detail: string) =>
    `cannot start the Slurm command "${command}" (${detail}); run dendrolog with --executor slurm on a machine where the Slurm commands are on the PATH (a cluster's login node), or use --executor local`,
  clusterSubmitFailed: (detail: string) =>
    `sbatch refused the job array: ${detail.trim() || 'no message'}; check the --slurm-* options (partition, time limit, memory, account) against the cluster's limits (sinfo, scontrol show partition)`,
  clusterUnreachable: (detail: string) =>
    `the Slurm controller could not be reached (${detail.trim()}); try again when it answers (sinfo tells); what finished is in the cache, so running again submits only the missing steps`,
  clusterTaskFailed: (step: string, job: string, state: string, exitCode: string, log: string, detail: string) =>
    `step ${step} failed as Slurm task ${job} (${state}, exit code ${exitCode}): ${detail}; its log is ${log}; what finished is in the cache, so running again submits only the missing steps`,
  clusterStateMeaning: (state: string) =>
    state === 'CANCELLED'
      ? 'the task was cancelled (by scancel or an administrator), not a failure of the step; run again to finish'
      : state === 'TIMEOUT'
        ? 'the task ran past its time limit; give a longer --slurm-time, or fewer --slurm-steps-per-task'
        : state === 'OUT_OF_MEMORY'
          ? 'the task ran out of memory; give a larger --slurm-mem'
          : 'the task ended before the step could say why; its log may tell',
  clusterNeverStarts: (job: string, reason: string) =>
    `Slurm will never start job ${job} as submitted: its tasks wait with reason ${reason} (the partition, account or QOS cannot grant what a task asks, such as more cores, memory or time than a node or the partition allows); dendrolog cancelled it; ask for less with --slurm-cpus, --slurm-mem or --slurm-time, or choose another --slurm-partition or --slurm-account (sinfo and scontrol show partition tell the limits)`,
  clusterPartUnreadable: (part: string, key: string, status: string) =>
    `${part}, grown by its Slurm task and stored under key ${key}, ${status === 'miss' ? 'is not in the cache' : 'could not be read back from the cache and was removed'}; run again to grow that part again`,
  clusterOutputUnreadable: (step: string, key: string) =>
    `the output of step ${step}, stored by its Slurm task under key ${key}, could not be read back from the cache (the warning above says why); run again to recompute it`,
  clusterTaskNoRecord: (step: string, job: string, log: string) =>
    `step ${step} was submitted as Slurm task ${job}, which ended without an output and without a record Slurm still keeps (it was cancelled before it started, or its record was purged); its log, if it started, is ${log}; what finished is in the cache, so running again submits only the missing steps`,
  clusterTaskNoOutput: (step: string, job: string, log: string) =>
    `step ${step} ran as Slurm task ${job} but left no output in the cache; is the cache folder on a file system the compute nodes share? Its log is ${log}`,
  clusterCacheUnwritable: (dir: string) =>
    `the Slurm executor needs to store every step output in the cache, and cannot write to ${dir}; give a writable --cache folder on a file system every node shares`,
  clusterInterrupted: (job: string) => `interrupted: cancelled Slurm job ${job}; what finished is in the cache, so running again submits only the missing steps`,
  usageEnvValue: (name: string, value: string, expected: string) => `environment variable ${name} is ${q(value)}; expected ${expected}; set it right or unset it`,
  clusterVerifyKept: (message: string, dir: string) =>
    `${message.replace(/; what finished is in the cache, so running again submits only the missing steps$/, '')} (verify starts from an empty cache each time; its temporary cache ${dir} is kept for the task logs: remove it when read)`,
  cacheUnwritable: (dir: string, code: string) =>
    `cannot write to the cache folder ${dir} (${code}${FS_WHY.has(code) ? `: ${FS_WHY.get(code)}` : ''}); this run goes on without storing step outputs, so the next run recomputes them; free disk space or make the folder writable, or give another folder with --cache DIR (or --no-cache)`,
  outputFolderNotDendrologs: (folder: string) =>
    `${folder} already exists and is not a run folder dendrolog wrote, so it will not be replaced; choose another --out (or another report.folder or name), or move or remove that folder yourself`,
  outputFolderHasOtherFiles: (folder: string, names: string[]) =>
    `run folder ${folder} also holds ${listed(names.map(q))}, which dendrolog did not write, so it will not be replaced; move ${names.length === 1 ? 'that' : 'those'} out of the folder, or choose another --out`,
  outputNotAFolder: (path: string) =>
    `${path} exists and is not a plain folder (it is a file or a link), so it will not be replaced; choose another --out, or remove it yourself`,
  reportFolderEscapes: (folder: string) =>
    `report.folder ${q(folder)} leaves the recipe's folder; give a folder inside it (such as "out"), or pass --out to write the run folder elsewhere`,
  predictionsOverInput: (out: string) =>
    `--out ${q(out)} is the data file being predicted, which would be overwritten; give a new file name for the predictions`,
  predictionsOverRunInput: (out: string, file: string) =>
    `--out ${q(out)} is ${file}, a file the run was made from, which would be overwritten; give a new file name for the predictions`,
  predictionsIntoRunFolder: (out: string, folder: string) =>
    `--out ${q(out)} lies inside the run folder ${folder}, whose files must stay as the run wrote them; write the predictions outside it`,
  predictionsOverOtherFile: (out: string) =>
    `--out ${q(out)} already exists and is not a predictions file that "dendrolog predict" wrote, so it will not be overwritten; give a new file name, or remove that file yourself`,
  predictionsNotAFile: (out: string) =>
    `--out ${q(out)} is a folder or a link, not a file; give the path of a new file for the predictions`,
} as const;
