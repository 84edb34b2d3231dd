import { formatCount } from './format.js';
import type { Results, TimedResidual } from './results.js';

/**
 * The most points each set draws; beyond, every k-th row in time order, and the caption says so.
 * Points carry no label of their own for screen readers (the figure's description says what they
 * show), which keeps a page of many points light.
 */
export const MAX_TIME_POINTS = 1000;

/** The LOESS smooth's bandwidth: the share of the points each local fit uses. */
const BANDWIDTH = 0.3;

const SETS = ['holdout', 'out-of-fold'] as const;

/**
 * The headline model's residuals over the declared time column, holdout and out-of-fold in two
 * colours, each with a LOESS smooth (Cleveland 1979), as a Vega-Lite spec with its title and
 * caption. Drift of a smooth away from 0 is what a reviewer of environmental data looks for first:
 * the model's error depends on when. Null without a time column or without residuals.
 *
 * Example: `timeResidualView(results.timeResiduals!, 'forest', 'chl')?.title`
 */
export function timeResidualView(
  view: NonNullable<Results['timeResiduals']>,
  model: string,
  target: string,
  colours: readonly [string, string],
): { title: string; description: string; spec: Record<string, unknown> } | null {
  const sets: [string, TimedResidual[]][] = [
    [SETS[0], view.holdout],
    [SETS[1], view.outOfFold],
  ];
  if (sets.every(([, rows]) => rows.length === 0)) return null;
  const sampled = sets.map(([set, rows]) => {
    const ordered = [...rows].sort((a, b) => a.t - b.t);
    const step = Math.max(1, Math.ceil(ordered.length / MAX_TIME_POINTS));
    return { set, all: ordered.length, step, points: ordered.filter((_, i) => i % step === 0).map((r) => ({ set, t: r.t, residual: r.residual })) };
  });
  const counted = sampled
    .filter((s) => s.all > 0)
    .map((s) => (s.step > 1 ? `${formatCount(s.points.length)} of ${formatCount(s.all)} ${s.set} rows (one in every ${s.step} in time order)` : `${formatCount(s.all)} ${s.set} rows`))
    .join(' and ');
  const x = view.date ? { field: 't', type: 'temporal', title: view.time } : { field: 't', type: 'quantitative', title: view.time, scale: { zero: false } };
  const colour = { field: 'set', type: 'nominal', title: 'Rows', scale: { domain: [...SETS], range: [...colours] }, sort: [...SETS] };
  return {
    title: `Residuals over ${view.time} (${model})`,
    description:
      `Residual (observed − predicted ${target}) of ${counted} against ${view.time}: holdout rows as the final fit predicts them, training rows as the fold model that did not see them predicts them. ` +
      `Lines are LOESS smooths (bandwidth ${BANDWIDTH}). A smooth drifting away from 0 means the error depends on when; a forest cannot follow a trend beyond the times it was trained on.`,
    spec: {
      width: 560,
      height: 240,
      data: { values: sampled.flatMap((s) => s.points) },
      layer: [
        { mark: { type: 'rule', color: '#5b6b70', strokeDash: [5, 4] }, encoding: { y: { datum: 0, type: 'quantitative' } } },
        { mark: { type: 'point', filled: true, opacity: 0.45, size: 14, aria: false }, encoding: { x, y: { field: 'residual', type: 'quantitative', title: `Residual (${target})` }, color: colour } },
        {
          transform: [{ loess: 'residual', on: 't', groupby: ['set'], bandwidth: BANDWIDTH }],
          mark: { type: 'line', strokeWidth: 2.5 },
          encoding: { x, y: { field: 'residual', type: 'quantitative' }, color: colour },
        },
      ],
    },
  };
}
