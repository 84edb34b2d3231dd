import { formatNumber } from './format.js';
import type { Manifest } from './manifest.js';

export interface RecipeChange {
  path: string;
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

/** What changed between two runs, for a pull-request comment or a machine. */
export interface Comparison {
  same: boolean;
  recipe: RecipeChange[];
  data: { source: string; change: string; old: { sha256: string; rows: number } | null; new: { sha256: string; rows: number } | null }[];
  headline: { old: string; new: string };
  holdout: HoldoutChange;
  chosen: { model: string; old: string | null; new: string | null }[];
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
  diff(a.recipe.normalized, b.recipe.normalized, '', recipe);
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
  const holdout = holdoutChange(a.split, b.split);
  const comparable = holdout.status === 'same';
  for (const name of models) {
    const o = a.models.find((m) => m.name === name);
    const n = b.models.find((m) => m.name === name);
    const oc = label(o?.chosen);
    const nc = label(n?.chosen);
    if (oc !== nc) chosen.push({ model: name, old: oc, new: nc });
    if (!o || !n) continue;
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
  return { same, recipe, data, headline, holdout, chosen, metrics, importance, warnings };
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

function diff(a: unknown, b: unknown, path: string, out: RecipeChange[]): void {
  const isObj = (v: unknown): v is Record<string, unknown> => v !== null && typeof v === 'object' && !Array.isArray(v);
  const objectList = (v: unknown): v is unknown[] => Array.isArray(v) && v.some(isObj);
  if (isObj(a) && isObj(b)) {
    for (const k of [...new Set([...Object.keys(a), ...Object.keys(b)])].sort()) diff(a[k], b[k], path ? `${path}.${k}` : k, out);
    return;
  }
  if (objectList(a) && objectList(b) && a.length === b.length) {
    a.forEach((v, i) => diff(v, b[i], `${path}[${i}]`, out));
    return;
  }
  if (JSON.stringify(a) !== JSON.stringify(b)) out.push({ path, old: a, new: b });
}

const show = (v: unknown) => (v === undefined ? '(absent)' : `\`${JSON.stringify(v)}\``);
const cell = (s: string) => s.replace(/\|/g, '\\|').replace(/</g, '&lt;').replace(/>/g, '&gt;');

/** The comparison as Markdown for a pull-request comment. */
export function comparisonMarkdown(c: Comparison, oldName: string, newName: string): string {
  const lines = [`## dendrolog: ${cell(oldName)} → ${cell(newName)}`, ''];
  if (c.same) {
    lines.push('No change: the recipe, the data, the holdout, the chosen configurations, the holdout metrics, the importance ranks and the warnings are all the same.', '');
    return lines.join('\n');
  }
  if (c.headline.old !== c.headline.new) lines.push(`**Headline model:** \`${c.headline.old}\` → \`${c.headline.new}\``, '');
  lines.push('### Holdout', '', ...holdoutLines(c.holdout), '', '### Recipe', '');
  if (c.recipe.length === 0) lines.push('No change.');
  for (const r of c.recipe) lines.push(`- \`${cell(r.path)}\`: ${cell(show(r.old))} → ${cell(show(r.new))}`);
  lines.push('', '### Data', '');
  if (c.data.length === 0) lines.push('No change.');
  for (const d of c.data) {
    lines.push(
      `- \`${cell(d.source)}\` ${d.change}: ${d.old ? `${d.old.rows} rows, SHA-256 ${d.old.sha256.slice(0, 12)}…` : '—'} → ${d.new ? `${d.new.rows} rows, SHA-256 ${d.new.sha256.slice(0, 12)}…` : '—'}`,
    );
  }
  lines.push('', '### Chosen configurations', '');
  if (c.chosen.length === 0) lines.push('No change.');
  for (const ch of c.chosen) lines.push(`- \`${cell(ch.model)}\`: ${ch.old ?? '—'} → ${ch.new ?? '—'}`);
  lines.push('', '### Holdout metrics', '');
  if (c.metrics.length === 0) lines.push('No change.');
  else {
    lines.push('| Model | Metric | Old | New | Old 90% interval | New value outside it? |', '|---|---|---:|---:|---|---|');
    for (const m of c.metrics) {
      const verdict = c.holdout.status === 'unknown' ? 'not known (no holdout record)' : !m.comparable ? 'not comparable (other holdout)' : m.outsideOldInterval ? '**yes**' : 'no';
      lines.push(
        `| ${cell(m.model)} | ${m.metric} | ${formatNumber(m.old)} | ${formatNumber(m.new)} | ${m.oldInterval.low === null ? '—' : `${formatNumber(m.oldInterval.low)} to ${formatNumber(m.oldInterval.high)}`} | ${verdict} |`,
      );
    }
  }
  lines.push('', '### Importance ranks (holdout permutation importance)', '');
  if (c.importance.length === 0) lines.push('No change.');
  for (const i of c.importance) lines.push(`- \`${cell(i.model)}\` · \`${cell(i.predictor)}\`: rank ${i.oldRank ?? '—'} → ${i.newRank ?? '—'}`);
  lines.push('', '### Warnings', '');
  if (!c.warnings.added.length && !c.warnings.resolved.length) lines.push('No change.');
  for (const w of c.warnings.added) lines.push(`- new: ${cell(w)}`);
  for (const w of c.warnings.resolved) lines.push(`- resolved: ${cell(w)}`);
  lines.push('');
  return lines.join('\n');
}
