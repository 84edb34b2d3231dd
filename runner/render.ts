import Handlebars from 'handlebars';
import { readdirSync, readFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { packageRoot } from './paths.js';
import type { ReportView } from './report-view.js';
import { shortenTexts } from './shorten.js';

let compiled: Handlebars.TemplateDelegate<ReportView> | undefined;

/**
 * Renders report.html from templates/report.hbs and its partials. Handlebars escapes every value,
 * so text from data or recipes can never become markup.
 */
export function renderReport(view: ReportView): string {
  if (!compiled) {
    const dir = join(packageRoot(), 'templates');
    const hb = Handlebars.create();
    for (const f of readdirSync(join(dir, 'partials'))) {
      if (f.endsWith('.hbs')) hb.registerPartial(basename(f, '.hbs'), readFileSync(join(dir, 'partials', f), 'utf8'));
    }
    compiled = hb.compile<ReportView>(readFileSync(join(dir, 'report.hbs'), 'utf8'), { strict: true });
  }
  return compiled(shortenTexts(view, new Set(['svg'])));
}

/** Escapes text for a Markdown table cell or line: markup characters as entities, Markdown ones with a backslash. */
function md(s: string): string {
  return s
    .replace(/&/g, '&amp;')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/[\\`*_[\]|]/g, (c) => `\\${c}`)
    .replace(/\n/g, ' ');
}

/** summary.md: the headline, the metrics table and the warnings, short enough for a pull-request comment. */
export function renderSummary(fullView: ReportView): string {
  const view = shortenTexts(fullView, new Set(['svg']));
  const h = view.headline;
  const lines = [
    `## ${md(view.title)}`,
    '',
    `**Chosen model:** \`${md(h.model)}\` (${h.kind}). **Holdout R²:** ${h.r2}${h.r2Interval ? ` (90% interval ${h.r2Interval})` : h.r2Reason ? ` (${md(h.r2Reason)})` : ''}, RMSE ${h.rmse}, on ${h.holdoutRows} holdout rows scored once.`,
  ];
  if (h.unreliable) lines.push(`**Intervals unreliable:** they rest on ${md(h.unreliable)}.`);
  if (h.skill.length) lines.push(`Skill against baselines (1 − MSE ratio): ${h.skill.map((s) => `${md(s.baseline)} ${s.value}`).join(', ')}.`);
  lines.push('', `| Model | Measured on | ${view.metricHeads.join(' | ')} |`, `|---|---|${view.metricHeads.map(() => '---:').join('|')}|`);
  for (const m of view.models) {
    for (const r of m.rows.slice(0, 2)) {
      lines.push(`| ${md(m.name)}${m.isHeadline ? ' (headline)' : ''}${m.failed ? ' (failed)' : ''} | ${r.label} | ${r.values.map((v) => v.value + (v.interval ? ` (${v.interval})` : '')).join(' | ')} |`);
    }
  }
  lines.push('', `### Warnings (${view.warnings.length})`, '');
  if (view.warnings.length === 0) lines.push('None.');
  for (const w of view.warnings) lines.push(`- ${md(w.message)}${w.count > 1 ? ` (×${w.count})` : ''}`);
  lines.push('', `Recipe SHA-256 \`${view.manifest.recipeSha.slice(0, 16)}…\`, seed ${view.manifest.seed}, dendrolog ${view.manifest.dendrolog}, Node.js ${view.manifest.node}.`, '');
  return lines.join('\n');
}
