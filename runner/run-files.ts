/**
 * The files of a run folder. The run record (the reproducibility manifest) and the fitted model
 * carry dendrolog's own names; folders of older versions used OLD_FILES, which are still read.
 */
export const RUN_FILES = {
  record: 'run-record.json',
  model: 'model.dendro',
  report: 'report.html',
  summary: 'summary.md',
  predictions: 'predictions.csv',
} as const;

/** The names older dendrolog versions gave the run record and the model file. */
export const OLD_FILES = { record: 'manifest.json', model: 'model.bin' } as const;
