import { spawnSync } from 'node:child_process';
import { cpSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserAvailable, CHROMIUM, CHROMIUM_ARGS } from './browser.js';

const root = resolve(import.meta.dirname, '..', '..');
const bin = join(root, 'bin', 'dendrolog.js');
/** Screenshots land here for a person to look at (ignored by git). */
export const SHOTS = join(root, 'test-output');

/** Runs the built command line as a user would, with output to a pipe (not a terminal). */
function dendrolog(args: string[], cwd: string) {
  const r = spawnSync(process.execPath, [bin, ...args], { cwd, encoding: 'utf8' });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

/**
 * WCAG 2.x contrast ratio of two CSS rgb() colours (W3C, "Web Content Accessibility Guidelines 2.1",
 * definitions of relative luminance and contrast ratio), written out here apart from the report's own.
 */
function contrast(a: string, b: string): number {
  const lum = (c: string) => {
    const [r, g, bl] = (c.match(/\d+(\.\d+)?/g) ?? []).slice(0, 3).map((v) => {
      const s = Number(v) / 255;
      return s <= 0.03928 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4;
    });
    return 0.2126 * r + 0.7152 * g + 0.0722 * bl;
  };
  const [hi, lo] = [lum(a), lum(b)].sort((x, y) => y - x);
  return (hi + 0.05) / (lo + 0.05);
}

const SECTIONS = ['Headline', 'Data', 'Cleaning', 'Features', 'Protocol', 'Grid', 'Chosen model', 'Holdout', 'Drivers', 'Warnings', 'Cautions', 'Reproducibility'];

describe('the demo recipe, end to end through the built command', () => {
  let work: string;
  let first: ReturnType<typeof dendrolog>;
  let second: ReturnType<typeof dendrolog>;
  let firstManifest: Record<string, unknown>;
  let firstReport: string;
  const outDir = () => join(work, 'lake', 'out', 'lake-chlorophyll');

  afterAll(() => rmSync(work, { recursive: true, force: true }));

  beforeAll(() => {
    if (!existsSync(join(root, 'dist', 'runner', 'cli.js'))) throw new Error('dist/ is missing: run "npm run build" first (npm test does)');
    work = mkdtempSync(join(tmpdir(), 'dendrolog-demo-'));
    cpSync(join(root, 'recipes', 'lake-chlorophyll'), join(work, 'lake'), {
      recursive: true,
      filter: (src) => !src.includes(join('lake-chlorophyll', 'out')),
    });
    first = dendrolog(['run', 'lake/lake-chlorophyll.yaml', '--cache', 'cache'], work);
    firstManifest = JSON.parse(readFileSync(join(outDir(), 'run-record.json'), 'utf8'));
    firstReport = readFileSync(join(outDir(), 'report.html'), 'utf8');
    second = dendrolog(['run', 'lake/lake-chlorophyll.yaml', '--cache', 'cache'], work);
  });

  it('runs, prints one plain line per step, and says where the report is', () => {
    expect(first.err).toBe('');
    expect(first.code).toBe(0);
    expect(first.out).not.toContain('\r');
    expect(first.out).toMatch(/^ran +\d+\.\d\d s {2}source samples/m);
    expect(first.out).toContain('Report: lake/out/lake-chlorophyll/report.html');
    for (const f of ['report.html', 'summary.md', 'run-record.json']) expect(existsSync(join(outDir(), f))).toBe(true);
    // every warning in full at the end, then the count
    const warnings = firstManifest.warnings as { message: string }[];
    expect(warnings.length).toBeGreaterThan(0);
    for (const w of warnings) expect(first.out).toContain(`\nwarning: ${w.message}\n`);
    expect(first.out).toMatch(new RegExp(`\\n${warnings.length} warnings; finished in [\\d.]+ s\\n$`));
  });

  it('takes every step from the cache the second time', () => {
    expect(second.code).toBe(0);
    const stepLines = second.out.split('\n').filter((l) => /^(ran|cached) /.test(l));
    expect(stepLines.length).toBe((firstManifest.steps as unknown[]).length);
    expect(stepLines.every((l) => l.startsWith('cached'))).toBe(true);
  });

  it('writes an identical manifest apart from the timing block', () => {
    const again = JSON.parse(readFileSync(join(outDir(), 'run-record.json'), 'utf8'));
    expect({ ...again, timing: null }).toEqual({ ...firstManifest, timing: null });
  });

  it('writes a byte-identical report apart from the run timestamp and duration', () => {
    const again = readFileSync(join(outDir(), 'report.html'), 'utf8');
    const strip = (html: string) => html.replace(/started \S+, took [\d.]+ s/, 'started T, took D s');
    expect(strip(again)).toBe(strip(firstReport));
    expect(again).not.toBe(firstReport);
  });

  it('holds the demo to what the invented data allow: the forest beats the mean on the holdout and the linear model in cross-validation', () => {
    // the invented response is nonlinear in its drivers, which 31 training lakes show; 9 holdout
    // lakes are too few to rank two good models reliably, so the holdout is held to the mean only
    const models = firstManifest.models as { name: string; skill: Record<string, number>; metrics: { crossValidated: { r2: { value: number } } } }[];
    const forest = models.find((m) => m.name === 'forest')!;
    const linear = models.find((m) => m.name === 'linear')!;
    expect(forest.skill.mean).toBeGreaterThan(0.5);
    expect(forest.metrics.crossValidated.r2.value).toBeGreaterThan(linear.metrics.crossValidated.r2.value + 0.03);
    expect((firstManifest.headline as { label: string }).label).toBe('holdout');
  });

  /** Training and holdout rows, as the first model's metrics count them. */
  const counts = () => {
    const m = (firstManifest.models as { metrics: { holdout: { n: number }; training: { n: number } } }[])[0].metrics;
    return { train: m.training.n, test: m.holdout.n };
  };

  it("gives the headline model's prediction intervals with their coverage of the holdout rows", () => {
    const models = firstManifest.models as { name: string; predictionInterval: { level: number; unitKind: string; units: number; coverage: { rows: number; share: number } } }[];
    const pi = models.find((m) => m.name === (firstManifest.headline as { model: string }).model)!.predictionInterval;
    expect([pi.level, pi.unitKind]).toEqual([0.9, 'groups']);
    expect(pi.coverage.rows).toBe(counts().test);
    expect(pi.coverage.share).toBeGreaterThan(0.5);
    expect(firstReport).toContain(`of ${counts().test.toLocaleString('en').replace(',', '\u2009')} observed values fell inside their interval (nominal 90%)`);
  });

  it('draws observed against predicted in µg/L, the original units of its log10 target, on log axes', () => {
    expect(firstReport).toContain("X-axis titled 'Predicted 10^log_chl' for a log scale");
    expect(firstReport).toContain("Y-axis titled 'Observed 10^log_chl' for a log scale");
  });

  describe('in a real browser', () => {
    let browser: Browser | undefined;
    const enabled = browserAvailable();
    beforeAll(async () => {
      if (enabled) browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
    });
    afterAll(async () => browser?.close());

    it.runIf(enabled)('reads with no console errors and no network requests, every section and plot labelled; screenshots at 1280 and 390 px', async () => {
      mkdirSync(SHOTS, { recursive: true });
      for (const width of [1280, 390]) {
        const page = await browser!.newPage({ viewport: { width, height: 900 } });
        const errors: string[] = [];
        const requests: string[] = [];
        page.on('console', (m) => m.type() === 'error' && errors.push(m.text()));
        page.on('pageerror', (e) => errors.push(String(e)));
        page.on('request', (r) => requests.push(r.url()));
        const url = `file://${join(outDir(), 'report.html')}`;
        await page.goto(url);
        expect(errors).toEqual([]);
        expect(requests).toEqual([url]);
        const headings = await page.locator('h2').allTextContents();
        expect(headings).toEqual(SECTIONS);
        const figures = await page.locator('figure.plot').all();
        expect(figures.length).toBeGreaterThanOrEqual(6);
        for (const f of figures) {
          const label = (await f.locator('div.svg').getAttribute('aria-label')) ?? '';
          const svgText = await f.locator('svg').first().innerHTML();
          expect(await f.locator('figcaption strong').textContent()).toMatch(/\S/);
          expect(svgText).toMatch(/role-title/);
          expect(svgText).toMatch(/X-axis titled '[^']+'/);
          expect(svgText).toMatch(/Y-axis titled '[^']+'/);
          expect(label.length).toBeGreaterThan(0);
        }
        // the protocol bar's parts are as wide as their rows (2,000 and more rows read as plain numbers in CSS)
        const widths = await page.evaluate(() => ['.bar .train', '.bar .hold'].map((q) => document.querySelector(q)!.getBoundingClientRect().width));
        const { train, test } = counts();
        expect(widths[0] / widths[1]).toBeCloseTo(train / test, 0);
        const overflow = await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
        expect(overflow).toBeLessThanOrEqual(0);
        await page.screenshot({ path: join(SHOTS, `demo-report-${width}.png`), fullPage: true });
        await page.close();
      }
    });

    it.runIf(enabled)('reaches every section from the contents list at the top', async () => {
      const page = await browser!.newPage({ viewport: { width: 1280, height: 900 } });
      await page.goto(`file://${join(outDir(), 'report.html')}`);
      const { links, sections } = await page.evaluate(() => ({
        links: [...document.querySelectorAll('nav.contents a')].map((a) => ({ href: a.getAttribute('href') ?? '', text: a.textContent ?? '' })),
        sections: [...document.querySelectorAll('section > h2')].map((h) => ({ id: h.parentElement!.id, text: h.textContent ?? '' })),
      }));
      expect(links.map((l) => l.href)).toEqual(sections.map((s) => `#${s.id}`));
      for (const [i, l] of links.entries()) expect(l.text.startsWith(sections[i].text)).toBe(true);
      // following a link scrolls its section to the top
      await page.click('nav.contents a[href="#drivers"]');
      expect(await page.evaluate(() => Math.round(document.getElementById('drivers')!.getBoundingClientRect().top))).toBeLessThanOrEqual(1);
      await page.close();
    });

    it.runIf(enabled)('labels every heat-map square with at least 4.5:1 contrast (WCAG 2.x), measured on the rendered SVG; screenshots of the headline, heat map and time view', async () => {
      const page = await browser!.newPage({ viewport: { width: 1280, height: 900 } });
      await page.goto(`file://${join(outDir(), 'report.html')}`);
      const pairs = await page.evaluate(() => {
        const out: { label: string; text: string; square: string }[] = [];
        for (const svg of document.querySelectorAll('figure[id^="fig-grid-"] svg')) {
          const squares = [...svg.querySelectorAll('.layer_0_marks path')];
          for (const t of svg.querySelectorAll('.layer_3_marks text')) {
            const r = t.getBoundingClientRect();
            const [x, y] = [r.left + r.width / 2, r.top + r.height / 2];
            const under = squares.find((p) => {
              const b = p.getBoundingClientRect();
              return x >= b.left && x <= b.right && y >= b.top && y <= b.bottom;
            });
            out.push({ label: t.textContent ?? '', text: getComputedStyle(t).fill, square: under ? getComputedStyle(under).fill : 'none' });
          }
        }
        return out;
      });
      expect(pairs.length).toBeGreaterThanOrEqual(4);
      for (const p of pairs) expect(contrast(p.text, p.square), `${p.label}: ${p.text} on ${p.square}`).toBeGreaterThanOrEqual(4.5);
      for (const [id, name] of [['headline', 'headline'], ['fig-grid-forest', 'heat-map'], ['fig-residuals-time', 'time-view']]) {
        await page.locator(`#${id}`).screenshot({ path: join(SHOTS, `demo-${name}-1280.png`) });
      }
      await page.close();
    });
  });
});
