import type { Warning } from './step-types.js';

/**
 * Collects warnings as data: a repeat of the same code and message raises its count.
 *
 * Example: two `add('x', 'm')` calls give `[{code: 'x', message: 'm', count: 2}]`.
 */
export class WarningLog {
  private readonly items = new Map<string, Warning>();

  add(code: string, message: string, count = 1): void {
    const k = `${code}\n${message}`;
    const w = this.items.get(k);
    if (w) w.count += count;
    else this.items.set(k, { code, message, count });
  }

  list(): Warning[] {
    return [...this.items.values()].map((w) => ({ ...w }));
  }
}
