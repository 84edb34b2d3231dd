/**
 * The README's commands, run as written: every fenced block the README marks with the comment
 * "README commands: run by test/e2e/readme.test.ts" is executed line by line ("$ " lines, through
 * bash, `npx dendrolog` being the built command) in a copy of the demo folder after `npm run demo`,
 * and what each command prints (both streams, in the order written) must be what the README shows under it. A
 * command with nothing shown under it must only succeed or fail as the README implies (no output
 * shown: exit code 0, except for a `check` whose shown output is an error).
 */
import { spawnSync } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const root = resolve(import.meta.dirname, '..', '..');
const MARK = '<!-- README commands: run by test/e2e/readme.test.ts -->';

/** One "$ " command of a marked block and the lines shown under it. */
interface Shown {
  command: string;
  output: string;
}

/** The marked blocks, each as its commands with their shown output. */
function markedBlocks(readme: string): Shown[][] {
  const blocks: Shown[][] = [];
  const lines = readme.split('\n');
  for (let i = 0; i < lines.length; i++) {
    if (lines[i] !== MARK) continue;
    const fence = lines[i + 1];
    if (!/^`{3,}$/.test(fence)) throw new Error(`README line ${i + 2}: a marked block must start with a bare fence`);
    const block: Shown[] = [];
    let j = i + 2;
    for (; lines[j] !== fence; j++) {
      if (lines[j].startsWith('$ ')) block.push({ command: lines[j].slice(2), output: '' });
      else block[block.length - 1].output += `${lines[j]}\n`;
    }
    blocks.push(block);
    i = j;
  }
  return blocks;
}

describe("the README's commands", () => {
  let work: string;
  const readme = readFileSync(join(root, 'README.md'), 'utf8');
  const blocks = markedBlocks(readme);
  const sh = (command: string) => {
    // both streams into one, in the order they were written, as a terminal shows them
    const r = spawnSync('bash', ['-c', `{ ${command.replace(/\bnpx dendrolog\b/g, `node ${join(root, 'bin', 'dendrolog.js')}`)} ; } 2>&1`], { cwd: work, encoding: 'utf8' });
    return { code: r.status, text: r.stdout };
  };

  beforeAll(() => {
    work = mkdtempSync(join(tmpdir(), 'dendrolog-readme-'));
    cpSync(join(root, 'recipes', 'lake-chlorophyll'), join(work, 'recipes', 'lake-chlorophyll'), {
      recursive: true,
      filter: (src) => !src.includes(join('lake-chlorophyll', 'out')),
    });
    // what `npm run demo` runs
    const demo = sh('npx dendrolog run recipes/lake-chlorophyll/lake-chlorophyll.yaml');
    expect(demo.code, demo.text).toBe(0);
  }, 180_000);
  afterAll(() => rmSync(work, { recursive: true, force: true }));

  it('marks five blocks', () => {
    expect(blocks).toHaveLength(5);
  });

  it('print what the README shows under them', () => {
    for (const block of blocks) {
      for (const { command, output } of block) {
        const r = sh(command);
        if (output) expect(r.text, `$ ${command}`).toBe(output);
        else expect([r.code, r.text], `$ ${command}`).toEqual([0, '']);
      }
    }
  }, 240_000);
});
