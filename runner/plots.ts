import * as vega from 'vega';
import * as vl from 'vega-lite';
import type { TopLevelSpec } from 'vega-lite';
import { TARGET_SCALES, targetScaleWords, varyingParams, type ExplainOutput } from '../steps/index.js';
import { formatCount, formatMetric, formatNumber, formatSetting } from './format.js';
import { gridHeatmap, HEAT_DARK, HEAT_LIGHT } from './grid-heatmap.js';
import { timeResidualView } from './time-view.js';
import type { Recipe } from '../core/recipe-types.js';
import { shortenText } from './shorten.js';
import type { Results } from './results.js';

/** The most points a scatter plot draws; beyond, every k-th row, and the caption says so. */
export const MAX_SCATTER_POINTS = 2500;

/** Longest group name an axis label shows whole. */
const PLOT_LABEL_LIMIT = 60;

/** A rendered figure: inline SVG plus the words a reader without the picture needs. */
export interface Figure {
  id: string;
  title: string;
  /** Text alternative: what the plot shows, in a sentence. */
  description: string;
  svg: string;
}

const INK = '#1d2a2f';
const MUTED = '#5b6b70';
const ACCENT = '#2f6f5e';
const SECOND = '#b07d2b';

/** dendrolog's plot style: quiet axes, one accent colour, the report's type. */
const CONFIG = {
  font: 'Source Sans 3, Segoe UI, system-ui, sans-serif',
  background: 'white',
  view: { stroke: null },
  title: { color: INK, fontSize: 14, fontWeight: 600, anchor: 'start' as const, offset: 10 },
  axis: { labelColor: MUTED, titleColor: INK, titleFontWeight: 500, gridColor: '#e6ecea', domainColor: '#b9c6c2', tickColor: '#b9c6c2', labelFontSize: 11, titleFontSize: 12 },
  legend: { labelColor: MUTED, titleColor: INK },
  mark: { color: ACCENT },
};

/**
 * Renders a Vega-Lite spec to SVG in Node, with no browser and no network. Vega escapes every text
 * it draws, so data values cannot become markup.
 */
export async function renderSvg(spec: TopLevelSpec): Promise<string> {
  const compiled = vl.compile({ ...(guardTitles(spec) as TopLevelSpec), config: CONFIG } as TopLevelSpec).spec;
  const view = new vega.View(vega.parse(compiled), { renderer: 'none' });
  const svg = await view.toSVG();
  view.finalize();
  return svg;
}

/**
 * Vega looks some title texts up in plain objects, so a title that is exactly the name of an
 * Object.prototype member (a column called "constructor") fails to render. A zero-width space after
 * such a title keeps it as text and shows the same.
 */
function guardTitles(value: unknown, key = ''): unknown {
  if (typeof value === 'string') return key === 'title' && Reflect.has(Object.prototype, value) ? value + '\u200b' : value;
  if (Array.isArray(value)) return value.map((v) => guardTitles(v, key));
  if (value && typeof value === 'object') {
    return Object.fromEntries(Object.entries(value).map(([k, v]) => [k, guardTitles(v, k === 'text' ? 'title' : k)]));
  }
  return value;
}

async function figure(id: string, title: string, description: string, spec: Record<string, unknown>): Promise<Figure> {
  // vega tags the data objects it is given; a copy keeps the results untouched
  const copy = JSON.parse(JSON.stringify({ title, description, ...spec })) as TopLevelSpec;
  return { id, title, description, svg: await renderSvg(copy) };
}

/**
 * Every plot of the report, built from the run's results. Axis titles name the columns (whose
 * names carry their units in the demo, such as chl_ug_l).
 */
export async function buildFigures(recipe: Recipe, results: Results): Promise<Record<string, Figure[]>> {
  const target = recipe.target;
  const head = results.models.find((m) => m.name === results.chosenModel)!;
  const { observed, predicted, groups } = results.holdoutRows;
  // a group name from the data can be any length: axis labels show it shortened (figures are not shortened later)
  const rows = observed.map((o, i) => ({ observed: o, predicted: predicted[i], residual: o - predicted[i], group: shortenText(groups?.[i] ?? '', PLOT_LABEL_LIMIT) }));
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of [observed, predicted]) for (const x of v) [lo, hi] = [Math.min(lo, x), Math.max(hi, x)];
  // a scatter of more points than a reader can tell apart only makes the page heavy: every step-th row
  const step = Math.max(1, Math.ceil(rows.length / MAX_SCATTER_POINTS));
  const drawn = step > 1 ? rows.filter((_, i) => i % step === 0) : rows;
  const scatterWords = step > 1 ? `${formatCount(drawn.length)} of the ${formatCount(rows.length)} holdout rows (one in every ${step}, in holdout order)` : `${formatCount(rows.length)} holdout rows`;
  const holdout: Figure[] = [];
  // with a target scale, observed against predicted in the quantity's own units, on a log axis
  // (the same picture, read in those units); else on the model's scale
  const scale = recipe.target_scale;
  const back = scale ? TARGET_SCALES[scale].inverse : (v: number) => v;
  const shown = scale ? targetScaleWords(scale, target) : target;
  const points = drawn.map((r) => ({ observed: back(r.observed), predicted: back(r.predicted) }));
  const [plo, phi] = [back(lo), back(hi)];
  const axisScale = scale === 'log1p' ? { type: 'symlog', domain: [plo, phi] } : scale ? { type: 'log', domain: [plo, phi] } : { domain: [lo, hi] };
  // the 1:1 line takes the points' domain on log axes; on a linear one it leaves the axis its nice round ends
  const lineScale = scale ? { scale: axisScale } : {};
  holdout.push(
    await figure('observed-predicted', `Observed vs predicted, holdout rows (${head.name})${scale ? `, in ${shown}` : ''}`,
      `Scatter of ${scatterWords}: predicted ${shown} on the horizontal axis, observed on the vertical${scale ? ' (back-transformed, on logarithmic axes)' : ''}, with the 1:1 line where a perfect model would put every point.`,
      {
        width: 340,
        height: 300,
        layer: [
          { data: { values: [{ v: plo }, { v: phi }] }, mark: { type: 'line', color: SECOND, strokeDash: [5, 4] }, encoding: { x: { field: 'v', type: 'quantitative', ...lineScale }, y: { field: 'v', type: 'quantitative', ...lineScale } } },
          {
            data: { values: points },
            mark: { type: 'circle', size: 18, opacity: 0.55, aria: false },
            encoding: {
              x: { field: 'predicted', type: 'quantitative', title: `Predicted ${shown}`, scale: axisScale },
              y: { field: 'observed', type: 'quantitative', title: `Observed ${shown}`, scale: axisScale },
            },
          },
        ],
      }),
  );
  holdout.push(
    await figure('residuals-predicted', `Residuals vs predicted, holdout rows (${head.name})`,
      `Scatter of residuals (observed minus predicted ${target}) against predicted ${target} for ${scatterWords}; a pattern around the zero line means the model is biased in part of its range.`,
      {
        width: 340,
        height: 300,
        data: { values: drawn },
        layer: [
          { mark: { type: 'rule', color: SECOND, strokeDash: [5, 4] }, encoding: { y: { datum: 0, type: 'quantitative' } } },
          {
            mark: { type: 'circle', size: 18, opacity: 0.55, aria: false },
            encoding: {
              x: { field: 'predicted', type: 'quantitative', title: `Predicted ${target}` },
              y: { field: 'residual', type: 'quantitative', title: `Residual (observed − predicted) ${target}` },
            },
          },
        ],
      }),
  );
  if (groups) {
    holdout.push(
      await figure('residuals-group', `Residuals by group, holdout rows (${head.name})`,
        `Box plot of residuals (observed minus predicted ${target}) for each of the ${new Set(groups).size} holdout groups (${recipe.groups}); a box away from zero is a group the model misjudges as a whole.`,
        {
          width: { step: 26 },
          height: 240,
          data: { values: rows },
          layer: [
            { mark: { type: 'rule', color: SECOND, strokeDash: [5, 4] }, encoding: { y: { datum: 0, type: 'quantitative' } } },
            {
              mark: { type: 'boxplot', extent: 1.5, size: 14, median: { color: 'white' } },
              encoding: {
                x: { field: 'group', type: 'nominal', title: `Group (${recipe.groups})`, axis: { labelAngle: -45 } },
                y: { field: 'residual', type: 'quantitative', title: `Residual (observed − predicted) ${target}` },
              },
            },
          ],
        }),
    );
  }
  const timed = results.timeResiduals ? timeResidualView(results.timeResiduals, head.name, target, [SECOND, ACCENT]) : null;
  if (timed) holdout.push(await figure('residuals-time', timed.title, timed.description, timed.spec));

  const drivers: Figure[] = [];
  if (head.explain) {
    const imp = head.explain.importance.map((i) => ({ predictor: i.predictor, mean: i.mean, low: i.mean - i.sd, high: i.mean + i.sd }));
    drivers.push(
      await figure('importance', `Permutation importance on holdout rows (${head.name})`,
        `Bars: the rise in holdout mean squared error when each predictor is shuffled, averaged over ${head.explain.repeats} repeats; whiskers span one standard deviation. Largest first: ${imp.slice(0, 3).map((i) => i.predictor).join(', ')}.`,
        {
          width: 320,
          height: { step: 22 },
          data: { values: imp },
          encoding: { y: { field: 'predictor', type: 'nominal', sort: null, title: 'Predictor' } },
          layer: [
            { mark: { type: 'bar' }, encoding: { x: { field: 'mean', type: 'quantitative', title: `Increase in holdout MSE (${target} squared)` } } },
            { mark: { type: 'rule', color: INK }, encoding: { x: { field: 'low', type: 'quantitative' }, x2: { field: 'high' } } },
          ],
        }),
    );
    for (const pd of head.explain.partialDependence) {
      const numeric = pd.kind === 'number';
      drivers.push(
        await figure(`pd-${pd.predictor}`, `Partial dependence on ${pd.predictor} (${head.name})`,
          `Average predicted ${target} over ${pdOver(head.explain)} when ${pd.predictor} is set to each value in turn (${numeric ? '5th to 95th percentile of the training values' : 'each category'}); it shows the model's response, not a cause.`,
          {
            width: 220,
            height: 160,
            data: { values: pd.points },
            mark: numeric ? { type: 'line', point: true } : { type: 'bar' },
            encoding: {
              x: { field: 'x', type: numeric ? 'quantitative' : 'nominal', title: pd.predictor, scale: numeric ? { zero: false } : undefined },
              y: { field: 'y', type: 'quantitative', title: `Mean predicted ${target}`, scale: { zero: false } },
            },
          }),
      );
    }
  }

  const grid: Figure[] = [];
  const by = recipe.evaluation.choose_by;
  for (const m of results.models) {
    const varying = varyingParams(recipe.models[m.name].grid);
    const heat = gridHeatmap(m, varying, by, results.folds.k);
    if (!heat) continue;
    const [a, b] = varying;
    const word = by === 'r2' ? 'R²' : by.toUpperCase();
    const noise =
      heat.se === null
        ? 'No fold-to-fold spread is known, so no square is marked as within it.'
        : `Dashed: within one standard error (${formatNumber(heat.se)}, the sd of its per-fold scores ÷ √${results.folds.k}), which this data cannot tell apart from it (CART's one-standard-error rule).`;
    grid.push(
      await figure(`grid-${m.name}`, `Cross-validated ${word} over ${a} and ${b} (${m.name})`,
        `Pooled cross-validated ${word} for each ${a} × ${b}${heat.rest.length ? ` (best over ${heat.rest.join(', ')})` : ''}; ${by === 'r2' ? 'higher' : 'lower'} is better. ` +
          `Colour from ${formatMetric(by, heat.worst)} (light) to ${formatMetric(by, heat.best)} (dark, best), at least four standard errors of the chosen cell wide, so fold-to-fold noise looks alike. ` +
          `Solid outline: the chosen cell. ${noise}`,
        {
          width: { step: 72 },
          height: { step: 40 },
          data: { values: heat.cells },
          // the labels' colours are given, not scaled: their colour channel must not join the squares'
          resolve: { scale: { color: 'independent' } },
          encoding: {
            x: { field: 'a', type: 'ordinal', title: a, sort: null },
            y: { field: 'b', type: 'ordinal', title: b, sort: null },
          },
          layer: [
            {
              mark: 'rect',
              encoding: {
                color: {
                  field: 'score',
                  type: 'quantitative',
                  title: `${word} (CV)`,
                  scale: { domain: [heat.worst, heat.best], range: [HEAT_LIGHT, HEAT_DARK], interpolate: 'rgb', clamp: true },
                },
              },
            },
            { transform: [{ filter: 'datum.near' }], mark: { type: 'rect', filled: false, stroke: '#000000', strokeWidth: 1.5, strokeDash: [4, 3] } },
            { transform: [{ filter: 'datum.chosen' }], mark: { type: 'rect', filled: false, stroke: '#000000', strokeWidth: 3 } },
            { mark: { type: 'text', fontSize: 11 }, encoding: { text: { field: 'label', type: 'nominal' }, color: { field: 'ink', type: 'nominal', scale: null } } },
          ],
        }),
    );
  }
  return { holdout, drivers, grid, protocol: await splitMapFigures(recipe, results) };
}

/** With spatial blocks, the rows on their coordinates, coloured by holdout and fold, over the block grid. */
async function splitMapFigures(recipe: Recipe, results: Results): Promise<Figure[]> {
  const map = results.splitMap;
  const b = recipe.blocks;
  if (!map || !b) return [];
  const sets = [...new Set(map.points.map((p) => p.set))].sort((p, q) => (p === 'holdout' ? -1 : q === 'holdout' ? 1 : p.localeCompare(q, 'en', { numeric: true })));
  // the axes' grid lines are the block boundaries, when there are not too many to read
  const edges = (v: number[]) => {
    const lo = Math.floor(Math.min(...v) / b.size);
    // a point on an edge belongs to the block above it, which is drawn whole
    const hi = Math.floor(Math.max(...v) / b.size) + 1;
    return hi - lo > 40 ? undefined : Array.from({ length: hi - lo + 1 }, (_, i) => +((lo + i) * b.size).toPrecision(12));
  };
  const axis = (v: number[]) => {
    const values = edges(v);
    return values ? { scale: { zero: false, domain: [values[0], values[values.length - 1]] }, axis: { values } } : { scale: { zero: false, padding: 12 } };
  };
  const sample = map.step > 1 ? ` (one in every ${map.step} of ${formatCount(map.rows)} rows)` : '';
  return [
    await figure('split-map', `Rows on ${b.x} and ${b.y}, by holdout and fold`,
      `Map of ${formatCount(map.points.length)} modelling rows${sample} on their coordinates ${b.x} and ${b.y}, coloured by the holdout and by the fold each training row is tested in; grid lines mark the square blocks of ${formatSetting(b.size)} on a side where they are few enough to draw.`,
      {
        width: 420,
        height: 360,
        data: { values: map.points },
        mark: { type: 'square', size: 30, opacity: 0.85 },
        encoding: {
          x: { field: 'x', type: 'quantitative', title: b.x, ...axis(map.points.map((p) => p.x)) },
          y: { field: 'y', type: 'quantitative', title: b.y, ...axis(map.points.map((p) => p.y)) },
          color: { field: 'set', type: 'nominal', title: 'Set', sort: sets, scale: { domain: sets, range: [INK, ...FOLD_COLOURS] } },
        },
      }),
  ];
}

/** Fold colours: distinct, mid-light, so the holdout's dark ink stands out among them. */
const FOLD_COLOURS = ['#7fb8a4', '#d9a55b', '#8fa3d6', '#d48a8a', '#b3b35c', '#a58cc4', '#6fb3c9', '#c9a07f', '#9cc47f', '#c98fb3'];

/** Which training rows a partial dependence curve averages over, in words. */
function pdOver(e: ExplainOutput): string {
  if (e.pdMethod === 'traversal') return `the ${e.pdRows} training rows (each tree weighting the rows it was grown on)`;
  return e.pdMethod === 'sample' ? `${e.pdRows} sampled training rows` : `the ${e.pdRows} training rows`;
}
