import { formatMetric } from './format.js';
import type { Manifest } from './manifest.js';

export interface RecipeChange {
  /** The keys down to the changed value, joined with dots (list items as [i]); `keys` holds them apart. */
  path: string;
  keys: (string | number)[];
  old: unknown;
  new: unknown;
}

export interface MetricChange {
  model: string;
  metric: string;
  old: number | null;
  new: number | null;
  oldInterval: { low: number | null; high: number | null };
  /** Whether both runs scored the same holdout units: only then is the old interval a yardstick. */
  comparable: boolean;
  /** Whether the new value lies outside the old run's 90% holdout interval (false when not comparable). */
  outsideOldInterval: boolean;
}

/** Whether two runs held out the same units, and if not, which. */
export interface HoldoutChange {
  /** 'unknown' when a manifest predates the record of its holdout. */
  status: 'same' | 'changed' | 'unknown';
  /** The new run's unit; each side's counts carry their own. */
  unit: 'group' | 'block' | 'row' | null;
  old: { unit: 'group' | 'block' | 'row'; holdout: number; training: number } | null;
  new: { unit: 'group' | 'block' | 'row'; holdout: number; training: number } | null;
  /** Units held out now that were not before (moved from training, or new), and the reverse; null when a run did not list its units. */
  nowHeldOut: string[] | null;
  noLongerHeldOut: string[] | null;
}

/**
 * One model's verdict: in one run only ('added', 'removed'); the same holdout scores ('unchanged');
 * scores changed, each within the old run's 90% interval ('within') or at least one beyond it
 * ('beyond'), or changed where the old run has no interval or the new score is undefined ('unjudged');
 * or scores changed on another holdout, or one not on record ('not comparable').
 */
export interface ModelVerdict {
  model: string;
  verdict: 'added' | 'removed' | 'unchanged' | 'within' | 'beyond' | 'unjudged' | 'not comparable';
  /** Whether the model was the headline of the old run and of the new one. */
  headline: { old: boolean; new: boolean };
}

/** What changed between two runs, for a pull-request comment or a machine. */
export interface Comparison {
  same: boolean;
  verdicts: ModelVerdict[];
  recipe: RecipeChange[];
  data: { source: string; change: string; old: { sha256: string; rows: number } | null; new: { sha256: string; rows: number } | null }[];
  headline: { old: string; new: string };
  holdout: HoldoutChange;
  /** Chosen configurations that differ, whole (`old`, `new`) and as the settings that changed. */
  chosen: { model: string; old: string | null; new: string | null; settings: { name: string; old: unknown; new: unknown }[] }[];
  metrics: MetricChange[];
  importance: { model: string; predictor: string; oldRank: number | null; newRank: number | null }[];
  warnings: { added: string[]; resolved: string[] };
}

/**
 * Compares two manifests: recipe changes as key paths, data changes, the chosen configurations,
 * holdout metric changes against the old interval, importance rank changes, new and resolved warnings.
 *
 * Example: `compareManifests(m, m).same === true`
 */
export function compareManifests(a: Manifest, b: Manifest): Comparison {
  const recipe: RecipeChange[] = [];
  diff(a.recipe.normalized, b.recipe.normalized, [], recipe);
  const data: Comparison['data'] = [];
  const names = [...new Set([...a.sources.map((s) => s.name), ...b.sources.map((s) => s.name)])];
  for (const name of names) {
    const o = a.sources.find((s) => s.name === name);
    const n = b.sources.find((s) => s.name === name);
    const pick = (s?: Manifest['sources'][number]) => (s ? { sha256: s.sha256, rows: s.rows } : null);
    if (!o) data.push({ source: name, change: 'added', old: null, new: pick(n) });
    else if (!n) data.push({ source: name, change: 'removed', old: pick(o), new: null });
    else if (o.sha256 !== n.sha256) data.push({ source: name, change: 'file changed', old: pick(o), new: pick(n) });
  }
  const label = (c: Record<string, unknown> | undefined) =>
    c ? Object.entries(c).map(([k, v]) => `${k}=${v === null ? 'none' : v}`).join(' ') || 'no hyperparameters' : null;
  const models = [...new Set([...a.models.map((m) => m.name), ...b.models.map((m) => m.name)])];
  const chosen: Comparison['chosen'] = [];
  const metrics: MetricChange[] = [];
  const importance: Comparison['importance'] = [];
  const verdicts: ModelVerdict[] = [];
  const holdout = holdoutChange(a.split, b.split);
  const comparable = holdout.status === 'same';
  for (const name of models) {
    const o = a.models.find((m) => m.name === name);
    const n = b.models.find((m) => m.name === name);
    const oc = label(o?.chosen);
    const nc = label(n?.chosen);
    if (oc !== nc) chosen.push({ model: name, old: oc, new: nc, settings: settingChanges(o?.chosen, n?.chosen) });
    const headline = { old: a.headline.model === name, new: b.headline.model === name };
    if (!o || !n) {
      verdicts.push({ model: name, verdict: o ? 'removed' : 'added', headline });
      continue;
    }
    const before = metrics.length;
    const oh = o.metrics.holdout as Record<string, { value: number | null }>;
    const nh = n.metrics.holdout as Record<string, { value: number | null }>;
    const oi = o.metrics.holdoutInterval90 as Record<string, { low: number | null; high: number | null }>;
    for (const k of ['r2', 'rmse', 'mae', 'bias']) {
      if (oh[k].value === nh[k].value) continue;
      const iv = oi[k] ?? { low: null, high: null };
      const v = nh[k].value;
      metrics.push({
        model: name,
        metric: k,
        old: oh[k].value,
        new: v,
        oldInterval: iv,
        comparable,
        outsideOldInterval: comparable && v !== null && iv.low !== null && iv.high !== null && (v < iv.low || v > iv.high),
      });
    }
    const moved = metrics.slice(before);
    verdicts.push({
      model: name,
      headline,
      verdict:
        moved.length === 0 ? 'unchanged'
        : !comparable ? 'not comparable'
        : moved.some((m) => m.outsideOldInterval) ? 'beyond'
        // within only when every moved score had an old interval and a value to place in it
        : moved.every((m) => m.new !== null && m.oldInterval.low !== null && m.oldInterval.high !== null) ? 'within'
        : 'unjudged',
    });
    const ranks = (m: typeof o) => {
      const values = ((m.importance as { values?: { predictor: string }[] } | null)?.values ?? []).map((v) => v.predictor);
      return new Map(values.map((p, i) => [p, i + 1] as const));
    };
    const or = ranks(o);
    const nr = ranks(n);
    for (const p of new Set([...or.keys(), ...nr.keys()])) {
      if (or.get(p) !== nr.get(p)) importance.push({ model: name, predictor: p, oldRank: or.get(p) ?? null, newRank: nr.get(p) ?? null });
    }
  }
  const key = (w: { code: string; message: string }) => w.message;
  const oldW = new Set(a.warnings.map(key));
  const newW = new Set(b.warnings.map(key));
  const warnings = { added: [...newW].filter((w) => !oldW.has(w)), resolved: [...oldW].filter((w) => !newW.has(w)) };
  const headline = { old: a.headline.model, new: b.headline.model };
  const same =
    recipe.length === 0 && data.length === 0 && chosen.length === 0 && metrics.length === 0 && importance.length === 0 &&
    warnings.added.length === 0 && warnings.resolved.length === 0 && headline.old === headline.new && holdout.status !== 'changed';
  return { same, verdicts, recipe, data, headline, holdout, chosen, metrics, importance, warnings };
}

/** The hyperparameters whose chosen values differ between two runs of one model, in the new run's order. */
function settingChanges(a: Record<string, unknown> | undefined, b: Record<string, unknown> | undefined): { name: string; old: unknown; new: unknown }[] {
  if (!a || !b) return [];
  const names = [...new Set([...Object.keys(b), ...Object.keys(a)])];
  return names
    .map((name) => ({ name, old: Object.hasOwn(a, name) ? a[name] : undefined, new: Object.hasOwn(b, name) ? b[name] : undefined }))
    .filter((x) => JSON.stringify(x.old) !== JSON.stringify(x.new));
}

/** Whether two runs' holdouts hold the same units, from their manifests' split records. */
export function holdoutChange(a: Manifest['split'], b: Manifest['split']): HoldoutChange {
  const counts = (x: Manifest['split']) => (x ? { unit: x.unit, holdout: x.holdoutUnits, training: x.trainingUnits } : null);
  if (!a || !b) return { status: 'unknown', unit: a?.unit ?? b?.unit ?? null, old: counts(a), new: counts(b), nowHeldOut: null, noLongerHeldOut: null };
  const same = a.unit === b.unit && a.digest === b.digest;
  const listed = a.holdout !== undefined && b.holdout !== undefined && a.unit === b.unit;
  const before = new Set(a.holdout ?? []);
  const after = new Set(b.holdout ?? []);
  return {
    status: same ? 'same' : 'changed',
    unit: b.unit,
    old: counts(a),
    new: counts(b),
    nowHeldOut: same ? [] : listed ? [...after].filter((u) => !before.has(u)) : null,
    noLongerHeldOut: same ? [] : listed ? [...before].filter((u) => !after.has(u)) : null,
  };
}

/** A few unit names for a sentence: the first five, then how many more. */
function someOf(units: string[]): string {
  const shown = units.slice(0, 5).map((u) => `\`${cell(u)}\``).join(', ');
  return units.length > 5 ? `${shown} and ${units.length - 5} more` : shown;
}

/** The holdout paragraph: the first thing a reviewer needs to read the metric changes. */
function holdoutLines(h: HoldoutChange): string[] {
  const count = (n: number, unit: string | null) => `${n} ${unit ?? 'unit'}${n === 1 ? '' : 's'}`;
  const units = (n: number) => count(n, h.unit);
  if (h.status === 'unknown') return ['Not known: a run predates the record of its holdout, so metric changes are not judged against the old interval.'];
  if (h.status === 'same') return [`Same holdout: the same ${units(h.new!.holdout)} held out in both runs, so metric changes are judged against the old interval.`];
  const lines = [`**The holdout changed** (${count(h.old!.holdout, h.old!.unit)} → ${count(h.new!.holdout, h.new!.unit)} held out), so the runs were not scored on the same rows and metric changes are not comparable row for row.`];
  if (h.old!.unit !== h.new!.unit) lines.push('', `The runs split by different units (${h.old!.unit}s, then ${h.new!.unit}s), so no unit can be followed from one to the other.`);
  else if (h.nowHeldOut === null || h.noLongerHeldOut === null) lines.push('', 'A run held out too many units to list them, so which ones moved is not known.');
  else {
    // rows are known by a hash of their target and time values: their names say nothing, their counts do
    const names = (u: string[]) => (h.unit !== 'row' && u.length ? `: ${someOf(u)}` : '');
    lines.push('', `- held out now, not before: ${units(h.nowHeldOut.length)}${names(h.nowHeldOut)}`, `- held out before, not now: ${units(h.noLongerHeldOut.length)}${names(h.noLongerHeldOut)}`);
  }
  return lines;
}

function diff(a: unknown, b: unknown, keys: (string | number)[], out: RecipeChange[]): void {
  const isObj = (v: unknown): v is Record<string, unknown> => v !== null && typeof v === 'object' && !Array.isArray(v);
  const objectList = (v: unknown): v is unknown[] => Array.isArray(v) && v.some(isObj);
  if (isObj(a) && isObj(b)) {
    for (const k of [...new Set([...Object.keys(a), ...Object.keys(b)])].sort()) diff(own(a, k), own(b, k), [...keys, k], out);
    return;
  }
  if (objectList(a) && objectList(b) && a.length === b.length) {
    a.forEach((v, i) => diff(v, b[i], [...keys, i], out));
    return;
  }
  if (JSON.stringify(a) !== JSON.stringify(b)) {
    const path = keys.map((k, i) => (typeof k === 'number' ? `[${k}]` : i === 0 ? k : `.${k}`)).join('');
    out.push({ path, keys, old: a, new: b });
  }
}

/** A key's own value (a user's model named `__proto__` reads its own entry, never the prototype). */
const own = (o: Record<string, unknown>, k: string): unknown => (Object.hasOwn(o, k) ? o[k] : undefined);

/** Text from a run record made inert in Markdown: no table cell, tag, code span or link can start in it. */
const cell = (s: string) =>
  s
    .replace(/\\/g, '\\\\')
    .replace(/\|/g, '\\|')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/`/g, '&#96;')
    .replace(/\[/g, '\\[');

const METRIC_WORDS: ReadonlyMap<string, string> = new Map([
  ['r2', 'R²'],
  ['rmse', 'RMSE'],
  ['mae', 'MAE'],
  ['bias', 'bias'],
]);

/** The verdict's opening sentence on the holdout: whether the old interval is a yardstick at all. */
function holdoutVerdict(h: HoldoutChange): string {
  if (h.status === 'same') return `Both runs held out the same ${h.new!.holdout} ${h.unit}${h.new!.holdout === 1 ? '' : 's'}, so each change is judged against the old run's 90% bootstrap interval.`;
  if (h.status === 'changed') return 'The holdout changed, so the two runs were scored on different rows: read their scores as two analyses, not as a rerun.';
  return "A run predates the record of its holdout, so no change is judged against the old run's interval.";
}

/** How many models moved, in one sentence. */
function countVerdict(v: ModelVerdict[]): string {
  const n = (kind: ModelVerdict['verdict']) => v.filter((x) => x.verdict === kind).length;
  const both = v.filter((x) => x.verdict !== 'added' && x.verdict !== 'removed').length;
  if (n('unchanged') === v.length) return `All ${v.length} models kept their holdout scores.`;
  const parts: string[] = [];
  if (n('beyond')) parts.push(`${n('beyond')} of ${both} moved beyond the old run's interval`);
  if (n('within')) parts.push(`${n('within')} changed within ${n('beyond') ? 'it' : "the old run's interval"}`);
  if (n('unjudged')) parts.push(`${n('unjudged')} changed with no old interval to judge by`);
  if (n('not comparable')) parts.push(`${n('not comparable')} scored differently on the other holdout`);
  if (n('unchanged')) parts.push(`${n('unchanged')} kept ${n('unchanged') === 1 ? 'its' : 'their'} holdout scores`);
  if (n('added')) parts.push(`${n('added')} added`);
  if (n('removed')) parts.push(`${n('removed')} removed`);
  return parts.length ? `Of the models, ${parts.join('; ')}.` : '';
}

/** One model's line: its verdict in words, then each changed metric with the old interval. */
function modelLine(v: ModelVerdict, c: Comparison): string {
  const role = v.headline.old && v.headline.new ? ' (headline in both runs)' : v.headline.new ? ' (the new headline)' : v.headline.old ? ' (the old headline)' : '';
  const name = `**\`${cell(v.model)}\`**${role}`;
  const chosen = c.chosen.find((x) => x.model === v.model);
  const setting = (v: unknown) => (v === undefined ? '(absent)' : v === null ? 'none' : String(v));
  const choice =
    chosen && chosen.settings.length > 0
      ? ` Chosen: ${chosen.settings.map((x) => `${cell(x.name)} ${cell(setting(x.old))} → ${cell(setting(x.new))}`).join(', ')}.`
      : '';
  if (v.verdict === 'added') return `- ${name}: only in the new run${chosen?.new ? ` (${cell(chosen.new)})` : ''}.`;
  if (v.verdict === 'removed') return `- ${name}: only in the old run.`;
  if (v.verdict === 'unchanged') return `- ${name}: the same holdout scores.${choice}`;
  const said = {
    beyond: "moved beyond the old run's interval",
    within: "changed within the old run's interval",
    unjudged: 'changed, with no old interval to judge it by',
    'not comparable': c.holdout.status === 'unknown' ? 'changed, on a holdout not on record' : 'scored on another holdout',
  }[v.verdict];
  const parts = c.metrics
    .filter((m) => m.model === v.model)
    .map((m) => {
      const interval = m.oldInterval.low === null || m.oldInterval.high === null ? null : `${formatMetric(m.metric, m.oldInterval.low)} to ${formatMetric(m.metric, m.oldInterval.high)}`;
      const judged =
        c.holdout.status === 'unknown'
          ? 'not judged: no holdout record'
          : !m.comparable
            ? 'not comparable: other holdout'
            : interval === null
              ? 'no old interval to judge by'
              : m.outsideOldInterval
                ? `**beyond** the old interval ${interval}`
                : `within the old interval ${interval}`;
      return `${METRIC_WORDS.get(m.metric) ?? m.metric} ${formatMetric(m.metric, m.old)} → ${formatMetric(m.metric, m.new)} (${judged})`;
    });
  return `- ${name}: ${said}. ${parts.join('; ')}.${choice}`;
}

/** A YAML key as written in a recipe: plain when it can be, quoted otherwise; list items by position. */
function yamlKey(k: string | number): string {
  if (typeof k === 'number') return `(item ${k + 1})`;
  return /^[A-Za-z_][A-Za-z0-9_-]*$/.test(k) ? k : JSON.stringify(k);
}

/**
 * The recipe changes as a diff of the recipe's YAML: the keys down to each change once, then the
 * old value (−) and the new (+), so a reviewer reads them where they sit in the recipe.
 */
function recipeDiff(changes: RecipeChange[]): string[] {
  const out: string[] = [];
  let prev: (string | number)[] = [];
  for (const ch of changes) {
    const keys = ch.keys.length ? ch.keys : ['(recipe)'];
    let common = 0;
    while (common < keys.length - 1 && common < prev.length - 1 && prev[common] === keys[common]) common++;
    for (let d = common; d < keys.length - 1; d++) out.push(` ${'  '.repeat(d)}${yamlKey(keys[d])}:`);
    const leaf = `${'  '.repeat(keys.length - 1)}${yamlKey(keys[keys.length - 1])}:`;
    if (ch.old !== undefined) out.push(`-${leaf} ${JSON.stringify(ch.old)}`);
    if (ch.new !== undefined) out.push(`+${leaf} ${JSON.stringify(ch.new)}`);
    prev = keys;
  }
  // a fence longer than any run of backticks inside, so no recipe value can end the block
  const longest = Math.max(0, ...out.map((l) => Math.max(0, ...(l.match(/`+/g) ?? []).map((r) => r.length))));
  const fence = '`'.repeat(Math.max(3, longest + 1));
  return [`${fence}diff`, ...out, fence];
}

/**
 * The comparison as Markdown for a pull-request comment: the verdict first (the holdout, then one
 * line per model), then the details: holdout units, recipe diff, data, importance ranks, warnings.
 */
export function comparisonMarkdown(c: Comparison, oldName: string, newName: string): string {
  const lines = [`## dendrolog compare: ${cell(oldName)} → ${cell(newName)}`, ''];
  if (c.same) {
    lines.push('No change: the recipe, the data, the holdout, the chosen configurations, the holdout metrics, the importance ranks and the warnings are all the same.', '');
    return lines.join('\n');
  }
  const headline = c.headline.old !== c.headline.new ? ` The headline model changed from \`${cell(c.headline.old)}\` to \`${cell(c.headline.new)}\`.` : '';
  lines.push(`**Verdict.** ${holdoutVerdict(c.holdout)} ${countVerdict(c.verdicts)}${headline}`.trimEnd(), '');
  for (const v of c.verdicts) lines.push(modelLine(v, c));
  lines.push('', '### Details', '', '#### Holdout', '', ...holdoutLines(c.holdout), '', '#### Recipe', '');
  if (c.recipe.length === 0) lines.push('No change.');
  else lines.push(...recipeDiff(c.recipe));
  lines.push('', '#### Data', '');
  if (c.data.length === 0) lines.push('No change.');
  for (const d of c.data) {
    lines.push(
      `- \`${cell(d.source)}\` ${d.change}: ${d.old ? `${d.old.rows} rows, SHA-256 ${d.old.sha256.slice(0, 12)}…` : '—'} → ${d.new ? `${d.new.rows} rows, SHA-256 ${d.new.sha256.slice(0, 12)}…` : '—'}`,
    );
  }
  lines.push('', '#### Importance ranks (holdout permutation importance)', '');
  if (c.importance.length === 0) lines.push('No change.');
  for (const i of c.importance) lines.push(`- \`${cell(i.model)}\` · \`${cell(i.predictor)}\`: rank ${i.oldRank ?? '—'} → ${i.newRank ?? '—'}`);
  lines.push('', '#### Warnings', '');
  if (!c.warnings.added.length && !c.warnings.resolved.length) lines.push('No change.');
  for (const w of c.warnings.added) lines.push(`- new: ${cell(w)}`);
  for (const w of c.warnings.resolved) lines.push(`- resolved: ${cell(w)}`);
  lines.push('');
  return lines.join('\n');
}
