/** The typed, normalized recipe: every default filled in. Everything after reading works on this. */

export type ColumnType = 'number' | 'string' | 'category' | 'date';

export interface SourceSpec {
  file: string;
  format: 'csv' | 'tsv';
  sha256: string | null;
  columns: Record<string, ColumnType>;
  missing: string[];
}

export interface JoinSpec {
  with: string;
  on: string[];
  keep: 'matched' | 'all';
}

export type CleanStep =
  | { kind: 'replace'; columns: string[]; values: (string | number)[]; with: 'missing' | number }
  | { kind: 'drop_missing'; columns: string[] }
  | { kind: 'keep_rows'; expr: string }
  | { kind: 'within'; column: string; min: number | null; max: number | null };

export type FeatureStep =
  | { kind: 'derive'; columns: Record<string, string> }
  | { kind: 'impute'; columns: string[]; with: 'mean' | 'median' }
  | { kind: 'one_hot'; column: string; unseen: 'error' | 'other' }
  | { kind: 'standardize'; columns: string[] };

export type ModelKind = 'random_forest' | 'decision_tree' | 'linear' | 'mean';

export interface ModelSpec {
  kind: ModelKind;
  /** Each hyperparameter's list of values; the grid is their Cartesian product. */
  grid: Record<string, (number | boolean | null)[]>;
}

export type SplitBy = 'random' | 'groups' | 'time';

export interface Evaluation {
  /** With by: time, `cutoff` (a date or number) puts rows at or after it in the holdout; else the latest `fraction`. */
  holdout: { by: SplitBy; fraction: number; cutoff: string | number | null };
  /** With by: time, `gap` leaves out training rows this close before each test block (days for dates). */
  folds: { k: number; by: SplitBy; gap: number };
  choose_by: 'rmse' | 'mae' | 'r2';
  metrics: ('r2' | 'rmse' | 'mae' | 'bias')[];
  max_cells: number;
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
  predictors: string[];
  groups: string | null;
  time: string | null;
  models: Record<string, ModelSpec>;
  evaluation: Evaluation;
  report: { folder: string };
}
