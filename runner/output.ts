import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';

/**
 * Writes a run's files into a fresh temporary folder beside the target, then swaps it into place,
 * so a failed or interrupted run never leaves a half-written report over a good one.
 *
 * Example: `writeFolderAtomically('out/lake', {'report.html': html})`
 */
export function writeFolderAtomically(target: string, files: Record<string, string | Uint8Array>): void {
  const parent = dirname(target);
  mkdirSync(parent, { recursive: true });
  const tag = `${process.pid}-${randomBytes(4).toString('hex')}`;
  const staging = join(parent, `.${basename(target)}.writing-${tag}`);
  mkdirSync(staging);
  try {
    for (const [name, content] of Object.entries(files)) writeFileSync(join(staging, name), content);
    if (existsSync(target)) {
      const old = join(parent, `.${basename(target)}.old-${tag}`);
      renameSync(target, old);
      renameSync(staging, target);
      rmSync(old, { recursive: true, force: true });
    } else renameSync(staging, target);
  } catch (e) {
    rmSync(staging, { recursive: true, force: true });
    throw e;
  }
}
