/**
 * Every message dendrolog shows a user, as functions named for the failure.
 * Each quotes the bad value, says where it is, and says what to do.
 * Tests compare against these functions, never against copied strings.
 */

/** An error meant for the user: message is complete, exitCode says whose fault it was. */
export class DendrologError extends Error {
  /** 2: bad usage or bad recipe; 1: the analysis failed. */
  readonly exitCode: 1 | 2;
  constructor(message: string, exitCode: 1 | 2) {
    super(message);
    this.name = 'DendrologError';
    this.exitCode = exitCode;
  }
}

/** Several recipe problems found at once, one line each. */
export class RecipeErrors extends DendrologError {
  readonly problems: string[];
  constructor(problems: string[]) {
    super(problems.join('\n'), 2);
    this.problems = problems;
  }
}

const q = (v: unknown): string => JSON.stringify(v);

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
    `"dendrolog ${cmd}" takes ${what}, but got ${got.length} arguments: ${got.join(' ')}`,
  dataFileMissing: (path: string) => `${path}: no such data file; give the path of a file shaped like the recipe's main source`,
  recipeFileMissing: (path: string) =>
    `${path}: no such recipe file; give the path of a recipe.yaml (for example recipes/lake-chlorophyll/recipe.yaml)`,

  // --- recipe syntax and schema (each prefixed by file:line:column by the caller)
  yamlSyntax: (detail: string) => `YAML syntax error: ${detail}; fix the YAML at this position`,
  yamlDuplicateKey: (key: string) => `key ${q(key)} appears twice in the same mapping; keep one of them`,
  unknownKey: (key: string, where: string, suggestion: string | undefined, allowed: string[]) =>
    `unknown key ${q(key)} in ${where}` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : `; allowed keys are ${allowed.join(', ')}`),
  missingKey: (key: string, where: string) => `${where} needs the key ${q(key)}; add it`,
  wrongType: (where: string, expected: string, got: unknown) =>
    `${where} must be ${expected}, but is ${q(got)}; change the value`,
  notInList: (where: string, got: unknown, allowed: unknown[], suggestion?: string) =>
    `${where} is ${q(got)}, which is not one of ${allowed.map((a) => q(a)).join(', ')}` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : ''),
  outOfRange: (where: string, got: unknown, rule: string) => `${where} is ${q(got)}, but it must be ${rule}`,
  badSlug: (where: string, got: unknown) =>
    `${where} is ${q(got)}; use lowercase letters, digits and dashes only, starting with a letter or digit`,
  badSha256: (where: string, got: unknown) =>
    `${where} is ${q(got)}; give the 64 lowercase hex digits of the SHA-256 (sha256sum prints it)`,
  badName: (name: string, where: string, dashes: boolean) =>
    `${q(name)} is not allowed as a name in ${where}; use letters, digits${dashes ? ', underscores and dashes' : ' and underscores'}, starting with a letter or underscore`,
  listRepeats: (where: string) => `${where} lists the same value twice; remove the repeat`,
  emptyMapping: (where: string) => `${where} is empty; give at least one entry`,
  oneStepPerItem: (where: string) => `${where} holds more than one step; give each step its own list item ("- ")`,
  emptyText: (where: string) => `${where} is empty; give a value`,
  textTooLong: (where: string, limit: number) => `${where} is longer than ${limit} characters; shorten it`,
  schemaOther: (where: string, detail: string) => `${where}: ${detail}`,
  unsupportedVersion: (got: unknown) =>
    `dendrolog: ${q(got)} is not a recipe format this version reads; this version reads format 1 (write "dendrolog: 1")`,

  // --- recipe meaning (checked after the schema)
  sourcePathEscapes: (file: string) =>
    `source file ${q(file)} leaves the recipe's folder; keep data inside the folder tree of the recipe (copy or link it there)`,
  sourceFileMissing: (file: string, resolved: string) =>
    `source file ${q(file)} was not found (looked for ${resolved}); check the path, which is relative to the recipe`,
  sourceHashMismatch: (file: string, pinned: string, actual: string) =>
    `source file ${q(file)} has SHA-256 ${actual}, but the recipe pins ${pinned}; the data changed: restore the pinned file, or update the sha256 if the change is intended`,
  unknownSource: (name: string, known: string[], suggestion?: string) =>
    `no source named ${q(name)}` + (suggestion ? `; did you mean ${q(suggestion)}?` : `; the sources are ${known.join(', ')}`),
  unknownColumn: (column: string, step: string, known: string[], suggestion?: string) =>
    `${step} names column ${q(column)}, which does not exist at that step` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : `; the columns are ${known.join(', ')}`),
  expressionCompile: (expr: string, detail: string) =>
    `expression ${q(expr)} does not compile: ${detail}; write an arquero expression over d.column_name, for example "d.depth_m <= 2"`,
  duplicateColumn: (column: string, step: string) =>
    `${step} would create column ${q(column)}, which already exists; choose another name`,
  predictorIsTarget: (column: string) =>
    `the target ${q(column)} is also listed as a predictor; remove it from predictors`,
  categoryPredictorNeedsEncoding: (column: string) =>
    `predictor ${q(column)} is text, which a model cannot use directly; add "- one_hot: {column: ${column}}" under features, or remove it from predictors`,
  targetNotNumber: (column: string, type: string) =>
    `the target ${q(column)} is declared as ${type}; a regression target must be a number column`,
  gridTooLarge: (cells: number, limit: number) =>
    `the models' grids have ${cells} cells in all, more than the limit of ${limit}; shrink the grids, or raise evaluation.max_cells if you mean it`,
  groupsNeeded: (where: string) =>
    `${where} splits by groups, but the recipe has no "groups" column; add "groups: <column>" or split at random`,
  timeNeeded: (where: string) =>
    `${where} splits by time, but the recipe has no "time" column; add "time: <column>" or split another way`,

  // --- data
  columnNotInFile: (file: string, column: string, header: string[], suggestion?: string) =>
    `${file}: declared column ${q(column)} is not in the file's header` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : `; the header has ${header.join(', ')}`),
  csvFieldCount: (file: string, line: number, expected: number, got: number) =>
    `${file}:${line}: row has ${got} fields, but the header has ${expected}; fix the row (a stray delimiter or an unquoted comma?)`,
  csvUnterminatedQuote: (file: string, line: number) =>
    `${file}:${line}: a quoted field starts here and is never closed; add the closing quote`,
  csvEmpty: (file: string) => `${file}: the file is empty; it needs a header row`,
  csvDuplicateHeader: (file: string, column: string) =>
    `${file}: the header names column ${q(column)} twice; rename one`,
  valueParse: (file: string, line: number, column: string, value: string, type: string) =>
    `${file}:${line}: column ${q(column)} holds ${q(value)}, which is not a ${type}; fix the value, list it under "missing", or declare the column with another type`,
  csvFieldCountNoHeader: (file: string, line: number, declared: number, got: number) =>
    `${file}:${line}: row has ${got} fields, but the source has no header and declares ${declared} columns (in file order); declare one column per field, or fix the row`,
  undeclaredColumns: (file: string, columns: string[]) =>
    `${file}: the file has columns the recipe does not declare: ${columns.join(', ')}; declare them under "columns", or set "undeclared: ignore" (leave them out) or "undeclared: text" (read them as text)`,
  declaredColumnMissing: (file: string, column: string, available: string[], suggestion?: string) =>
    `${file}: declared column ${q(column)} is not among the file's columns` +
    (suggestion ? `; did you mean ${q(suggestion)}?` : `; the file has ${available.join(', ')}`),
  valueParseAt: (file: string, where: string, column: string, value: string, type: string) =>
    `${file}: ${where}: column ${q(column)} holds ${q(value)}, which is not a ${type}; fix the value, list it under "missing", or declare the column with another type`,
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
    `; the file's variables are ${known.join(', ')}`,
  netcdfNotNumeric: (file: string, variable: string, type: string) =>
    `${file}: variable ${q(variable)} holds ${type} values; dendrolog reads numeric NetCDF variables; leave it out of "variables"`,
  netcdfDimensionsDiffer: (file: string, a: string, dimsA: string[], b: string, dimsB: string[]) =>
    `${file}: variables ${q(a)} (${dimsA.join(', ')}) and ${q(b)} (${dimsB.join(', ')}) do not share their dimensions, so they cannot be rows of one table; read them as two sources and join them`,
  netcdfUndeclaredDimension: (file: string, variable: string, dimension: string) =>
    `${file}: variable ${q(variable)} runs along dimension ${q(dimension)}, which the source does not declare; add "${dimension}: number" (or date, for a time axis) under "columns"`,
  netcdfDeclaredNotRead: (file: string, column: string, dimensions: string[], variables: string[]) =>
    `${file}: declared column ${q(column)} is neither a dimension (${dimensions.join(', ')}) nor a variable read (${variables.join(', ')}); remove it, or add it to "variables"`,
  netcdfTimeUnits: (file: string, variable: string, units: string, why: string) =>
    `${file}: variable ${q(variable)} has time units ${q(units)}, which cannot be decoded (${why}); dendrolog decodes "<days|hours|minutes|seconds> since YYYY-MM-DD[ hh:mm:ss]"; declare the column as number to keep the raw values`,
  netcdfCalendar: (file: string, variable: string, calendar: string) =>
    `${file}: variable ${q(variable)} uses the ${q(calendar)} calendar; dendrolog decodes only the standard (gregorian, proleptic_gregorian) calendar into dates; declare the column as number to keep the raw values`,
  netcdfDimensionValues: (file: string, dimension: string, type: string) =>
    `${file}: dimension ${q(dimension)} is declared as ${type}; declare a coordinate as number, or as date when it has CF time units`,
  netcdfSelectUnknown: (file: string, dimension: string, dimensions: string[]) =>
    `${file}: "select" names ${q(dimension)}, which is not a dimension of the variables read (${dimensions.join(', ')}); select on one of those`,
  netcdfSelectValue: (dimension: string, value: unknown, expected: string) =>
    `select.${dimension} bound ${q(value)} is not a ${expected}; write it as one, or null for an open side`,
  sourceOptionNotForFormat: (option: string, format: string, formats: string) =>
    `"${option}" applies only to ${formats} sources, and this one is read as ${format}; remove it, or set "format"`,
  netcdfVariablesNeeded: () =>
    `a NetCDF source needs "variables", the data variables to read (for example variables: [tas]); each must also be declared under "columns"`,
  netcdfVariableNotDeclared: (variable: string) =>
    `variable ${q(variable)} is not declared under "columns"; add "${variable}: number"`,
  targetAllMissing: (column: string) =>
    `the target ${q(column)} has no values left after cleaning; check the cleaning steps and the missing-value tokens`,
  tooFewRows: (rows: number, needed: number, what: string) =>
    `only ${rows} rows are left for ${what}, but at least ${needed} are needed; loosen the cleaning steps or use fewer folds`,
  timeMissing: (column: string, rows: number) =>
    `the time column ${q(column)} has ${rows} missing values among the modelling rows; drop them with "drop_missing: [${column}]" or split another way`,
  timeTooFewBlocks: (distinct: number, k: number) =>
    `forward time folds need at least ${k + 1} distinct times in the training rows, but there are ${distinct}; use fewer folds`,
  holdoutEmpty: (side: string, fix: string) => `the holdout split left the ${side} set empty; ${fix}`,
  missingInPredictor: (column: string, rows: number) =>
    `predictor ${q(column)} has ${rows} missing values in the modelling rows; drop them with "drop_missing" or fill them with an "impute" feature step`,
  unseenCategory: (column: string, value: string, known: string[]) =>
    `column ${q(column)} holds category ${q(value)}, which the training rows never had (they had ${known.join(', ')}); set "unseen: other" on its one_hot step to map it to a shared column, or drop those rows`,

  // --- verify, compare, predict
  notARunFolder: (folder: string) =>
    `${folder} holds no manifest.json, so it is not a dendrolog run folder; give the folder that "dendrolog run" wrote (it prints its path)`,
  manifestUnreadable: (file: string, detail: string) => `${file} is not a readable dendrolog manifest (${detail}); rerun the recipe to write a new one`,
  recipeOfRunMissing: (file: string) =>
    `the run's recipe ${file} is gone; restore it (the manifest keeps its normalized form and SHA-256) or run the recipe again`,
  sourceOfRunMissing: (file: string) => `source file ${file} of the run is gone; restore it to verify the run`,
  modelFileMissing: (folder: string) =>
    `${folder} has no model.bin; it was written by an older dendrolog or copied without it; run the recipe again`,
  // --- cache and output
  cacheCorrupt: (key: string) =>
    `cache entry ${key.slice(0, 12)} failed its checksum and was discarded; the step was recomputed`,
} as const;
