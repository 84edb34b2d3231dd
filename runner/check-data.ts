import { DendrologError, messages } from '../core/messages.js';
import type { Recipe } from '../core/recipe-types.js';
import { READERS, readRequest, type SourceParams } from '../steps/index.js';
import { displayOf } from './paths.js';
import { resolveSourcePath, type RecipeOrigin } from './recipe.js';

/** How many data rows `check` parses per source: enough to catch a wrong type, cheap on any file. */
export const CHECK_ROWS = 1000;

/**
 * Opens every source the way a run would, cheaply: the header (or the file's columns and, for
 * NetCDF, its variables and dimensions) and the first CHECK_ROWS rows parsed with the declared
 * types. Each problem is the reader's own message, naming the data file's line (or row) and column,
 * followed by where the recipe declares that column. Files the recipe checks already refused
 * (missing, outside the recipe's folder) are skipped here.
 *
 * Example: `await checkData(recipe, origin)` → `['data/obs.csv:3: column "farm_id": … ("farm_id" is declared at lake.yaml:9:15)']`
 */
export async function checkData(recipe: Recipe, origin: RecipeOrigin): Promise<string[]> {
  const problems: string[] = [];
  for (const [name, spec] of Object.entries(recipe.sources)) {
    const at = resolveSourcePath(origin, spec.file);
    if ('problem' in at) continue;
    const req = readRequest({ ...spec, sha256: '' } as SourceParams, at.path, displayOf(at.path));
    req.maxRows = CHECK_ROWS;
    try {
      await READERS[spec.format](req);
    } catch (e) {
      if (!(e instanceof DendrologError)) throw e;
      const column = e.column;
      problems.push(
        column !== undefined && Object.hasOwn(spec.columns, column)
          ? messages.declaredAt(e.message, column, origin.doc.where(['sources', name, 'columns', column]))
          : e.message,
      );
    }
  }
  return problems;
}
