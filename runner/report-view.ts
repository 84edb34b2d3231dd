import type { MetricSet } from '../models/metrics.js';
import { cellLabel, isLearned, modelKinds, recipeContract, targetScaleWords, varyingParams, type ColumnProfile } from '../steps/index.js';
import { scoreLadder } from './score-ladder.js';
import { formatCount, formatFixed, formatMetric, formatNumber, formatPercent, formatSetting, formatValue } from './format.js';
import type { Manifest } from './manifest.js';
import type { Recipe } from '../core/recipe-types.js';
import type { Results } from './results.js';
import type { Figure } from './plots.js';
import { table } from '../core/dict.js';

const METRIC_LABELS: Record<string, string> = table({ r2: 'R²', rmse: 'RMSE', mae: 'MAE', bias: 'Bias (predicted − observed)' });

/** One column's line of a profile table: type, units, missing count, and range or categories. */
function columnRow(c: ColumnProfile & { units?: string }) {
  return {
    name: c.name,
    type: c.type,
    units: c.units ?? '',
    missing: formatCount(c.missing),
    range:
      c.min !== undefined
        ? c.type === 'date'
          ? `${new Date(c.min).toISOString().slice(0, 10)} to ${new Date(c.max!).toISOString().slice(0, 10)}`
          : `${formatValue(c.min)} to ${formatValue(c.max)}`
        : c.categories
          ? `${c.distinct} distinct: ${c.categories.map((k) => `${k.value} (${k.count})`).join(', ')}${(c.distinct ?? 0) > c.categories.length ? ', …' : ''}`
          : 'no values',
  };
}

/** Everything the templates show, already formatted: templates only lay it out and escape it. */
export function reportView(recipe: Recipe, results: Results, manifest: Manifest, figures: Record<string, Figure[]> = {}) {
  const best = results.models.find((m) => m.name === results.chosenModel)!;
  // the grid table shows the choosing metric and R²; the manifest keeps all four
  const gridMetrics = [...new Set([recipe.evaluation.choose_by, 'r2' as const])];
  // intervals from a handful of holdout groups or rows carry the label wherever they are shown
  const unreliable = results.holdout.unreliable;
  const intervalText = (k: string, low: number | null, high: number | null) =>
    low === null ? '' : `${formatMetric(k, low)} to ${formatMetric(k, high)}${unreliable ? ', unreliable' : ''}`;
  const metricRow = (label: string, source: string, m: MetricSet, interval?: Results['models'][number]['intervals']) => ({
    label,
    source,
    n: formatCount(m.n),
    values: recipe.evaluation.metrics.map((k) => ({
      value: m[k].value === null ? `undefined (${m[k].reason})` : formatMetric(k, m[k].value),
      interval: interval ? intervalText(k, interval[k].low, interval[k].high) : '',
    })),
  });
  return {
    title: recipe.title,
    name: recipe.name,
    target: recipe.target,
    metricHeads: recipe.evaluation.metrics.map((k) => METRIC_LABELS[k]),
    headline: {
      model: best.name,
      kind: best.kind,
      r2: best.holdout.r2.value === null ? 'undefined' : formatMetric('r2', best.holdout.r2.value),
      r2Reason: best.holdout.r2.reason ?? '',
      r2Interval: intervalText('r2', best.intervals.r2.low, best.intervals.r2.high),
      unreliable: unreliable ?? '',
      rmse: formatNumber(best.holdout.rmse.value),
      original: best.original
        ? {
            words: targetScaleWords(best.original.scale, recipe.target),
            rmse: formatNumber(best.original.rmse.value),
            mae: formatNumber(best.original.mae.value),
            bias: formatNumber(best.original.bias.value),
          }
        : null,
      holdoutRows: formatCount(results.holdout.test),
      interval: intervalView(best.predictionInterval, recipe, results.folds.k),
      chooseBy: METRIC_LABELS[recipe.evaluation.choose_by],
      ladder: scoreLadder(
        results.models.map((m) => ({
          name: m.name,
          role: m.name === best.name ? 'chosen' : modelKinds[m.kind].baseline !== null ? 'baseline' : '',
          value: m.holdout.r2.value,
          reason: m.holdout.r2.reason ?? undefined,
          low: m.intervals.r2.low,
          high: m.intervals.r2.high,
        })),
      ),
      skill: Object.entries(best.skill).map(([b, s]) => ({ baseline: b, value: s === null ? `undefined (${best.skillReasons[b] ?? 'no value'})` : formatMetric('r2', s) })),
      warnings: results.warnings.length,
      warningsWord: results.warnings.length === 1 ? 'warning' : 'warnings',
    },
    sources: results.sources.map((s) => ({
      name: s.name,
      file: s.file,
      sha256: s.sha256,
      tableSha256: s.tableSha256,
      hasUnits: s.columns.some((c) => c.units),
      rows: formatCount(s.rows),
      columns: s.columns.map(columnRow),
    })),
    modelTable: { rows: formatCount(results.modelTable.rows), columns: results.modelTable.columns.map(columnRow) },
    cleaning: results.cleaning.map((c) => ({
      step: c.id,
      rowsIn: formatCount(c.rowsIn),
      rowsOut: formatCount(c.rowsOut),
      removed: formatCount(c.rowsIn - c.rowsOut),
      detail: c.detail,
    })),
    features: recipe.features.map(({ kind, ...params }) => ({
      kind,
      where: isLearned(kind) ? 'learned on the training rows of each fold, then on all training rows for the final fit' : 'all rows, row by row (nothing learned)',
      text: recipeContract('features', kind)?.describe?.(params) ?? kind,
    })),
    figures,
    headlineRepeats: best.explain?.repeats ?? 0,
    headlineRepeatsPlural: (best.explain?.repeats ?? 0) !== 1,
    chosen: {
      name: best.name,
      kind: best.kind,
      cell: best.chosenLabel,
      used: Object.entries(best.used).map(([k, v]) => ({ name: k, value: formatSetting(v) })),
      oob: best.oobR2 === null ? null : formatMetric('r2', best.oobR2),
    },
    protocol: {
      rows: formatCount(results.holdout.train + results.holdout.test),
      foldCells: Array.from({ length: results.folds.k }, (_, i) => i + 1),
      holdoutBy: splitWords(results.holdout.by, recipe, 'holdout'),
      fraction: formatValue(results.holdout.fraction * 100),
      train: formatCount(results.holdout.train),
      test: formatCount(results.holdout.test),
      // plain numbers for the bar's CSS flex: a thousands separator would make the value invalid
      trainWeight: String(results.holdout.train),
      testWeight: String(results.holdout.test),
      trainGroups: results.holdout.trainGroups,
      testGroups: results.holdout.testGroups,
      grouped: results.holdout.by === 'groups' || results.holdout.by === 'blocks',
      unitWord: results.holdout.by === 'blocks' ? 'blocks' : results.holdout.by === 'groups' ? 'groups' : 'rows',
      k: results.folds.k,
      foldsBy: splitWords(results.folds.by, recipe, 'folds'),
      timeFolds: results.folds.by === 'time',
      chooseBy: METRIC_LABELS[recipe.evaluation.choose_by],
    },
    gridMetricHeads: gridMetrics.map((k) => METRIC_LABELS[k]),
    models: results.models.map((m) => {
      const varying = varyingParams(recipe.models[m.name].grid);
      return {
      name: m.name,
      kind: m.kind,
      isHeadline: m.name === results.chosenModel,
      failed: m.failed ?? '',
      chosen: m.chosenLabel,
      fixed: Object.entries(m.cells[0].cell)
        .filter(([k]) => !varying.includes(k))
        .map(([k, v]) => `${k} = ${formatSetting(v)}`)
        .join(', '),
      params: varying,
      cells: m.cells.map((c, i) => ({
        label: cellLabel(c.cell),
        values: varying.map((k) => formatSetting(c.cell[k])),
        chosen: i === m.chosen && m.failed === null,
        failed: c.failed ?? '',
        scores: gridMetrics.flatMap((k) => {
          const s = c.perFold[k];
          return [c.pooled[k].value === null ? 'undefined' : formatMetric(k, c.pooled[k].value), s.mean === null ? '—' : `${formatMetric(k, s.mean)} ± ${formatNumber(s.sd)}`];
        }),
      })),
      used: Object.entries(m.used).map(([k, v]) => ({ name: k, value: formatSetting(v) })),
      rows: [
        metricRow('holdout', 'holdout rows, scored once', m.holdout, m.intervals),
        metricRow('cross-validated', `pooled out-of-fold predictions, ${results.folds.k} folds`, m.crossValidated),
        metricRow('training', 'in-sample: not skill', m.training),
      ],
      oob: m.oobR2 === null ? null : formatMetric('r2', m.oobR2),
      importance: (m.explain?.importance ?? []).map((i) => ({ predictor: i.predictor, mean: formatNumber(i.mean), sd: formatNumber(i.sd) })),
      repeats: m.explain?.repeats ?? 0,
      interval: intervalView(m.predictionInterval, recipe, results.folds.k),
      };
    }),
    warnings: results.warnings.map((w) => ({ ...w, repeated: w.count > 1 })),
    manifest: {
      recipeSha: manifest.recipe.sha256,
      seed: manifest.seed,
      node: manifest.environment.node,
      dendrolog: manifest.environment.dendrolog,
      platform: `${manifest.environment.platform}-${manifest.environment.arch}`,
      dependencies: Object.entries(manifest.environment.dependencies).map(([k, v]) => `${k} ${v}`).join(', '),
      git: manifest.git ? `${manifest.git.commit.slice(0, 12)}${manifest.git.dirty ? ' (with uncommitted changes)' : ''}` : 'not in a git repository',
      started: manifest.timing.started,
      seconds: formatFixed(manifest.timing.seconds, 1),
      steps: manifest.steps.length,
    },
  };
}

export type ReportView = ReturnType<typeof reportView>;

/** The largest number of groups listed one by one under the prediction intervals' coverage. */
const LISTED_GROUPS = 12;


/** A model's prediction intervals and their coverage, in words and a by-group table; null when the recipe turned them off. */
function intervalView(pi: Results['models'][number]['predictionInterval'], recipe: Recipe, k: number) {
  if (!pi) return null;
  const level = `${formatValue(100 * pi.level)}%`;
  const units =
    pi.unitKind === 'groups' ? `${formatCount(pi.units)} training groups (${recipe.groups}), each counting once`
    : pi.unitKind === 'blocks' ? `${formatCount(pi.units)} training blocks, each counting once`
    : `${formatCount(pi.units)} training rows`;
  const c = pi.coverage;
  // the groups that missed most first: where a reviewer should look
  const groups = c ? [...c.byGroup].sort((a, b) => a.inside / a.rows - b.inside / b.rows || (a.group < b.group ? -1 : 1)) : [];
  return {
    level,
    units,
    k,
    reason: pi.reason ?? '',
    forNewGroups: pi.unitKind !== 'rows',
    unitWord: pi.unitKind === 'blocks' ? 'block' : 'group',
    groupHead: recipe.groups ? `Holdout group (${recipe.groups})` : 'Holdout block',
    coverage: c
      ? {
          share: formatPercent(c.share),
          inside: formatCount(c.inside),
          rows: formatCount(c.rows),
          width: formatNumber(c.meanWidth),
          widthOriginal: c.meanWidthOriginal === null ? null : formatNumber(c.meanWidthOriginal),
          below: c.share < pi.level,
          groups: groups.slice(0, LISTED_GROUPS).map((g) => ({ group: g.group, rows: formatCount(g.rows), share: formatPercent(g.inside / g.rows) })),
          moreGroups: groups.length > LISTED_GROUPS ? formatCount(groups.length - LISTED_GROUPS) : null,
          groupCount: formatCount(groups.length),
        }
      : null,
  };
}

function splitWords(by: string, recipe: Recipe, part: 'holdout' | 'folds'): string {
  if (by === 'groups') return `by groups (${recipe.groups})`;
  if (by === 'blocks') {
    const b = recipe.blocks!;
    return `by spatial blocks (squares of ${formatSetting(b.size)} on ${b.x} and ${b.y}, each whole on one side)`;
  }
  if (by === 'random') return 'at random';
  if (part === 'holdout') {
    const { cutoff: c, gap } = recipe.evaluation.holdout;
    const rows = c === null ? `by time (${recipe.time}): the latest rows` : `by time (${recipe.time}): rows at or after ${c}`;
    return gap ? `${rows}, training rows ending a gap of ${gap} before them` : rows;
  }
  const gap = recipe.evaluation.folds.gap;
  return `forward in time (${recipe.time}): each fold trains only on earlier rows${gap ? `, leaving a gap of ${gap}` : ''}`;
}
