/** Where the runner reports each step: a live bar on a terminal, plain lines otherwise. */
export interface Progress {
  start(id: string): void;
  /** Fraction done of the running step, 0..1. */
  update(fraction: number): void;
  finish(line: { id: string; status: 'ran' | 'cached'; seconds: number; summary: string }): void;
  note(text: string): void;
}

/** A finished step's line, aligned for reading down a column. */
export function stepLine(l: { id: string; status: 'ran' | 'cached'; seconds: number; summary: string }): string {
  const status = l.status === 'ran' ? 'ran   ' : 'cached';
  return `${status} ${l.seconds.toFixed(2).padStart(7)} s  ${l.id}${l.summary ? `  (${l.summary})` : ''}`;
}

/**
 * Progress on a stream. On a terminal the running step shows a bar redrawn in place, replaced by its
 * finished line; elsewhere only finished lines are written, one per step.
 */
export function streamProgress(stream: NodeJS.WriteStream | { write(s: string): unknown; isTTY?: boolean }): Progress {
  const tty = Boolean((stream as NodeJS.WriteStream).isTTY);
  let current: string | null = null;
  let started = 0;
  let fraction = 0;
  let timer: NodeJS.Timeout | null = null;
  const draw = () => {
    if (!current) return;
    const width = 24;
    const filled = Math.round(fraction * width);
    const secs = ((Date.now() - started) / 1000).toFixed(1);
    stream.write(`\r\x1b[2K[${'#'.repeat(filled)}${'.'.repeat(width - filled)}] ${secs} s  ${current}`);
  };
  return {
    start(id) {
      current = id;
      started = Date.now();
      fraction = 0;
      if (tty) timer = setInterval(draw, 200);
    },
    update(f) {
      fraction = Math.max(0, Math.min(1, f));
    },
    finish(line) {
      if (timer) clearInterval(timer);
      timer = null;
      current = null;
      stream.write(`${tty ? '\r\x1b[2K' : ''}${stepLine(line)}\n`);
    },
    note(text) {
      stream.write(`${text}\n`);
    },
  };
}

/** Progress that records lines and prints nothing (tests, library use). */
export function silentProgress(lines: string[] = []): Progress {
  return {
    start() {},
    update() {},
    finish(line) {
      lines.push(stepLine(line));
    },
    note(text) {
      lines.push(text);
    },
  };
}

/** Progress for --quiet: no line per step, but notes (an old cache folder, a cache that cannot be written) still shown. */
export function notesOnly(stream: { write(s: string): unknown }): Progress {
  return {
    start() {},
    update() {},
    finish() {},
    note(text) {
      stream.write(`${text}\n`);
    },
  };
}
