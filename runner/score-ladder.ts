import { formatFixed, formatMetric } from './format.js';

/** One model's holdout R² and its 90% interval, as the results hold them (null where undefined). */
export interface LadderInput {
  name: string;
  role: 'chosen' | 'baseline' | '';
  value: number | null;
  /** Why the value is undefined; shown in its place. */
  reason?: string;
  low: number | null;
  high: number | null;
}

/** A rung as the template draws it: positions in percent of the track, already formatted. */
export interface LadderRung {
  name: string;
  role: string;
  chosen: boolean;
  value: string;
  dot: string | null;
  span: { left: string; width: string } | null;
  /** Set when the value or its interval reaches below the drawn scale: the rung says so with an arrow. */
  below: boolean;
}

export interface Ladder {
  rungs: LadderRung[];
  ticks: { left: string; label: string }[];
  /** The drawn scale in words, for the caption and for screen readers. */
  domain: string;
}

/** No scale reaches below this R²: a model worse than that is shown at the edge, its value in words. */
const FLOOR = -1;

/**
 * The headline's score ladder: every model's holdout R² on one scale from a round value at or below
 * 0 (the score of predicting the mean) to 1 (a perfect fit), each with its 90% bootstrap interval as
 * a bar, the chosen model first. Scales reach no lower than −1; a model below that sits at the edge
 * with an arrow and its number.
 *
 * Example: `scoreLadder([{name: 'forest', role: 'chosen', value: 0.8, low: 0.7, high: 0.9}]).domain` → `"0 to 1"`
 */
export function scoreLadder(models: LadderInput[]): Ladder {
  const lows = models.flatMap((m) => [m.value, m.low]).filter((v): v is number => v !== null && Number.isFinite(v));
  const lowest = Math.min(0, ...lows);
  // a round lower end, in steps of a fifth, no lower than the floor
  const from = Math.max(FLOOR, Math.floor(lowest * 5) / 5);
  const to = 1;
  const at = (v: number) => ((Math.min(to, Math.max(from, v)) - from) / (to - from)) * 100;
  const pct = (v: number) => v.toFixed(2);
  const step = to - from > 1.2 ? 0.5 : to - from > 0.6 ? 0.2 : 0.1;
  const ticks: Ladder['ticks'] = [];
  // round multiples of the step, so 0 and 1 are always among them
  for (let k = Math.ceil(from / step - 1e-9); k * step <= to + 1e-9; k++) {
    const v = Math.round(k * step * 10) / 10;
    ticks.push({ left: pct(at(v)), label: formatFixed(v, 1) });
  }
  const ordered = [...models.filter((m) => m.role === 'chosen'), ...models.filter((m) => m.role !== 'chosen')];
  const rungs = ordered.map((m): LadderRung => {
    const has = m.value !== null && Number.isFinite(m.value);
    const spanned = m.low !== null && m.high !== null && Number.isFinite(m.low) && Number.isFinite(m.high);
    return {
      name: m.name,
      role: m.role,
      chosen: m.role === 'chosen',
      value: has ? formatMetric('r2', m.value) : `undefined${m.reason ? ` (${m.reason})` : ''}`,
      dot: has ? pct(at(m.value!)) : null,
      span: spanned ? { left: pct(at(m.low!)), width: pct(at(m.high!) - at(m.low!)) } : null,
      below: (has && m.value! < from) || (spanned && m.low! < from),
    };
  });
  return { rungs, ticks, domain: `${formatFixed(from, 1)} to ${formatFixed(to, 1)}` };
}
