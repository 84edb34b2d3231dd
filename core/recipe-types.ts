/** The typed, normalized recipe: every default filled in. Everything after reading works on this. */

export type ColumnType = 'number' | 'string' | 'category' | 'date';

/** How a source file is read; chosen from the file's extension unless the recipe says. */
export type SourceFormat = 'csv' | 'tsv' | 'json' | 'parquet' | 'arrow' | 'netcdf';

/** Date layouts a source may declare for text dates. */
export type DateFormat = 'YYYY-MM-DD' | 'DD/MM/YYYY' | 'MM/DD/YYYY' | 'DD.MM.YYYY' | 'YYYY-MM-DD HH:mm' | 'DD/MM/YYYY HH:mm';

/** An inclusive range of coordinate values for a NetCDF `select`; null leaves that side open. */
export type CoordinateRange = [number | string | null, number | string | null];

export interface SourceSpec {
  file: string;
  format: SourceFormat;
  sha256: string | null;
  columns: Record<string, ColumnType>;
  missing: string[];
  /** Columns of the file the recipe does not declare: ignored (default), an error, or read as text. */
  undeclared: 'ignore' | 'error' | 'text';
  /** Layout of dates written as text. */
  date_format: DateFormat;
  /** Text formats (csv, tsv, json) only: the encoding label the file is decoded with, strictly. */
  encoding?: string;
  /** Delimited text (csv, tsv) only. */
  delimiter?: string;
  decimal?: '.' | ',';
  header?: boolean;
  /** NetCDF only: the data variables to read (each becomes a column beside its dimensions' coordinates). */
  variables?: string[];
  /** NetCDF only: ranges of coordinate values to keep, by dimension. */
  select?: Record<string, CoordinateRange>;
}

export interface JoinSpec {
  with: string;
  on: string[];
  keep: 'matched' | 'all';
}

/**
 * A cleaning or feature step as normalized: its kind and its parameters, every default written
 * out. Each kind's parameters are its definition's own (`steps/<kind>.ts`), which says through its
 * recipe contract how the step reads, normalizes and checks; nothing outside it switches on the kind.
 */
export interface RecipeStep {
  kind: string;
  [param: string]: unknown;
}

/** A step of the recipe's `clean` list. */
export type CleanStep = RecipeStep;
/** A step of the recipe's `features` list: computed row by row (derive) or learned from training rows. */
export type FeatureStep = RecipeStep;

/** Transforms a target may be on, each with a known inverse (see steps/target-scale.ts). */
export type TargetScale = 'log10' | 'ln' | 'log1p';

/** A model kind: one of the adapters in steps/model-kinds.ts, which says its hyperparameters and their defaults. */
export type ModelKind = string;

export interface ModelSpec {
  kind: ModelKind;
  /** Each hyperparameter's list of values; the grid is their Cartesian product. */
  grid: Record<string, (number | boolean | null)[]>;
}

export type SplitBy = 'random' | 'groups' | 'time' | 'blocks';

/** Square spatial blocks: the coordinate columns and a block's side, in the coordinates' units. */
export interface Blocks {
  x: string;
  y: string;
  size: number;
}

export interface Evaluation {
  /**
   * With by: time, `cutoff` (a date or number) puts rows at or after it in the holdout; else the
   * latest `fraction`. `gap` (days for a date column) leaves the rows just before the cutoff out of
   * both sides, so training ends that long before the holdout starts.
   */
  holdout: { by: SplitBy; fraction: number; cutoff: string | number | null; gap: number };
  /** With by: time, `gap` leaves out training rows this close before each test block (days for dates). */
  folds: { k: number; by: SplitBy; gap: number };
  choose_by: 'rmse' | 'mae' | 'r2';
  metrics: ('r2' | 'rmse' | 'mae' | 'bias')[];
  max_cells: number;
  /** CV+ prediction intervals for every model at this level (0.9 by default); false when the recipe turns them off. */
  prediction_interval: { level: number } | false;
}

export interface Recipe {
  dendrolog: 1;
  name: string;
  title: string;
  seed: number;
  sources: Record<string, SourceSpec>;
  join: JoinSpec[];
  clean: CleanStep[];
  features: FeatureStep[];
  target: string;
  /** The transform the target is on, so that predictions and errors are also shown on the original scale; null when none. */
  target_scale: TargetScale | null;
  predictors: string[];
  groups: string | null;
  time: string | null;
  /** The columns that identify a row in splits of single rows; null: its target and time. */
  row_key: string[] | null;
  /** Spatial blocks for splits by blocks; null when the recipe declares none. */
  blocks: Blocks | null;
  models: Record<string, ModelSpec>;
  evaluation: Evaluation;
  report: { folder: string };
}
