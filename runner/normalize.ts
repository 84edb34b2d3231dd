import type {
  Evaluation,
  ModelKind,
  RecipeStep,
  ModelSpec,
  Recipe,
  SourceFormat,
  SourceSpec,
} from '../core/recipe-types.js';
import { dict, dictOf, table } from '../core/dict.js';
import { gridWithDefaults, readDefaults, recipeContract, type GridValue, type RecipeSection } from '../steps/index.js';

/** Seed used when the recipe gives none; written into the normalized recipe and the manifest. */
export const DEFAULT_SEED = 1;
/** Tokens read as missing when a source lists none. */
export const DEFAULT_MISSING = ['', 'NA'];
/** Upper bound on grid cells across all models unless the recipe raises it. */
export const DEFAULT_MAX_CELLS = 200;

type Raw = Record<string, unknown>;

/** File extensions and the format each implies when a source gives no `format`; anything else is read as csv. */
export const FORMAT_BY_EXTENSION: Record<string, SourceFormat> = table({
  csv: 'csv',
  tsv: 'tsv',
  tab: 'tsv',
  json: 'json',
  parquet: 'parquet',
  pq: 'parquet',
  arrow: 'arrow',
  arrows: 'arrow',
  feather: 'arrow',
  ipc: 'arrow',
  nc: 'netcdf',
  nc4: 'netcdf',
  cdf: 'netcdf',
  netcdf: 'netcdf',
});

/** The format a file's extension implies (csv when the extension says nothing). */
export function formatOf(file: string): SourceFormat {
  const ext = /\.([A-Za-z0-9]+)$/.exec(file)?.[1]?.toLowerCase() ?? '';
  return FORMAT_BY_EXTENSION[ext] ?? 'csv';
}

/**
 * A source with every default of its format written out: text (csv, tsv, json) gets its encoding
 * (utf-8), delimited text its delimiter, decimal mark and header flag; NetCDF its variables (the declared columns, until the reader
 * tells coordinates from variables) and an empty select.
 *
 * Example: `normalizeSource({file: 'a.tsv', columns: {x: 'number'}}).delimiter === '\t'`
 */
export function normalizeSource(s: Raw): SourceSpec {
  const file = String(s.file);
  const format = (s.format as SourceFormat | undefined) ?? formatOf(file);
  const d = readDefaults(format);
  const spec: SourceSpec = {
    file,
    format,
    sha256: (s.sha256 as string | undefined) ?? null,
    columns: dictOf(s.columns as SourceSpec['columns']),
    missing: ((s.missing as unknown[] | undefined) ?? DEFAULT_MISSING).map(String),
    undeclared: (s.undeclared as SourceSpec['undeclared'] | undefined) ?? d.undeclared,
    date_format: (s.date_format as SourceSpec['date_format'] | undefined) ?? d.date_format,
  };
  if (d.encoding !== undefined) spec.encoding = (s.encoding as string | undefined) ?? d.encoding;
  if (d.delimiter !== undefined) {
    spec.delimiter = (s.delimiter as string | undefined) ?? d.delimiter;
    spec.decimal = (s.decimal as '.' | ',' | undefined) ?? d.decimal;
    spec.header = (s.header as boolean | undefined) ?? d.header;
  }
  if (format === 'netcdf') {
    if (s.variables !== undefined) spec.variables = (s.variables as string[]).map(String);
    spec.select = dictOf(s.select as SourceSpec['select'] | undefined);
  }
  return spec;
}

/**
 * Fills every default so the recipe says everything it means. Input has passed the schema.
 *
 * Example: a source without `missing` gets `missing: ["", "NA"]`.
 */
export function normalizeRecipe(raw: Raw): Recipe {
  const groups = (raw.groups as string | undefined) ?? null;
  const sources = dict<SourceSpec>();
  for (const [name, s] of Object.entries(raw.sources as Record<string, Raw>)) {
    sources[name] = normalizeSource(s);
  }
  const models = dict<ModelSpec>();
  for (const [name, m] of Object.entries(raw.models as Record<string, Raw>)) {
    const kind = m.kind as ModelKind;
    models[name] = { kind, grid: gridWithDefaults(kind, (m.grid as Record<string, GridValue> | undefined) ?? {}) };
  }
  const ev = (raw.evaluation as Raw | undefined) ?? {};
  const holdout = (ev.holdout as Raw | undefined) ?? {};
  const folds = (ev.folds as Raw | undefined) ?? {};
  const evaluation: Evaluation = {
    holdout: {
      by: (holdout.by as Evaluation['holdout']['by'] | undefined) ?? (groups ? 'groups' : 'random'),
      fraction: (holdout.fraction as number | undefined) ?? 0.2,
      cutoff: (holdout.cutoff as string | number | undefined) ?? null,
      gap: (holdout.gap as number | undefined) ?? 0,
    },
    folds: {
      k: (folds.k as number | undefined) ?? 5,
      by: (folds.by as Evaluation['folds']['by'] | undefined) ?? (groups ? 'groups' : 'random'),
      gap: (folds.gap as number | undefined) ?? 0,
    },
    choose_by: (ev.choose_by as Evaluation['choose_by'] | undefined) ?? 'rmse',
    metrics: (ev.metrics as Evaluation['metrics'] | undefined) ?? ['r2', 'rmse', 'mae', 'bias'],
    max_cells: (ev.max_cells as number | undefined) ?? DEFAULT_MAX_CELLS,
    prediction_interval: ev.prediction_interval === false ? false : { level: ((ev.prediction_interval as Raw | undefined)?.level as number | undefined) ?? 0.9 },
  };
  return {
    dendrolog: 1,
    name: String(raw.name),
    title: (raw.title as string | undefined) ?? String(raw.name),
    seed: (raw.seed as number | undefined) ?? DEFAULT_SEED,
    sources,
    join: ((raw.join as Raw[] | undefined) ?? []).map((j) => ({
      with: String(j.with),
      on: Array.isArray(j.on) ? j.on.map(String) : [String(j.on)],
      keep: (j.keep as 'matched' | 'all' | undefined) ?? 'matched',
    })),
    clean: ((raw.clean as Raw[] | undefined) ?? []).map((c) => normalizeStep('clean', c)),
    features: ((raw.features as Raw[] | undefined) ?? []).map((f) => normalizeStep('features', f)),
    target: String(raw.target),
    target_scale: (raw.target_scale as Recipe['target_scale'] | undefined) ?? null,
    predictors: (raw.predictors as string[]).map(String),
    groups,
    time: (raw.time as string | undefined) ?? null,
    row_key: Array.isArray(raw.row_key) ? raw.row_key.map(String) : null,
    blocks: raw.blocks ? { x: String((raw.blocks as Raw).x), y: String((raw.blocks as Raw).y), size: Number((raw.blocks as Raw).size) } : null,
    models,
    evaluation,
    report: { folder: ((raw.report as Raw | undefined)?.folder as string | undefined) ?? 'out' },
  };
}

/** A cleaning or feature step through its kind's own contract: `{kind, ...params}` with every default written out. */
function normalizeStep(section: RecipeSection, step: Raw): RecipeStep {
  const [kind, v] = Object.entries(step)[0] as [string, unknown];
  const contract = recipeContract(section, kind);
  if (!contract) throw new Error(`normalizeStep: schema let through ${section} step ${kind}`);
  return { kind, ...(contract.normalize(v) as Record<string, unknown>) };
}
