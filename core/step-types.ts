import type { Frame } from './frame.js';

/** How a step's output becomes bytes for the cache and back. */
export type OutputCodec = 'frame' | 'json';

/** A frame plus what the step has to say about it (rows in and out, reasons). */
export interface FrameOutput {
  frame: Frame;
  notes: StepNotes;
}

/** What a data step reports for the cleaning table of the report. */
export interface StepNotes {
  rowsIn: number;
  rowsOut: number;
  /** Why rows left or values changed, in plain words. */
  detail: string;
  /** Values changed in place (for example sentinels replaced), by column. */
  changed?: Record<string, number>;
  /** Extra facts for the report, such as per-column profiles of a source. */
  extra?: unknown;
}

/** A warning: data, merged by code and message, counted. */
export interface Warning {
  code: string;
  message: string;
  count: number;
}

/** What a step may use besides its inputs and params. Never module-level state. */
export interface StepContext {
  /** Key of the step instance being run. */
  key: string;
  /** A seeded generator for one purpose, independent of execution order: uniform in [0, 1). */
  rng(purpose: string, index?: number): () => number;
  /** A seed string for engines that derive their own generators. */
  seedFor(purpose: string, index?: number): string;
  warn(code: string, message: string): void;
  /** Threads a step may use (the forest engine grows trees on them). */
  workers: number;
  /** Things outside the key: absolute paths, positions for messages. */
  locator: Record<string, string>;
  /** Reports the fraction done of a long step, for the progress bar. */
  progress(fraction: number): void;
}

/**
 * A step kind: pure `(inputs, params, ctx) -> output`. Adding a kind is one file in steps/ and
 * one line in steps/index.ts.
 */
export interface StepDefinition<P = unknown, O = unknown> {
  kind: string;
  /** Bump when the step's behaviour changes, so cached outputs are not reused. */
  version: number;
  codec: OutputCodec;
  /** Whether the step draws random numbers: then the master seed is part of its key. */
  usesSeed?: boolean;
  /** Whether neighbouring instances may run side by side on worker threads (heavy, independent steps). */
  parallel?: boolean;
  run(inputs: unknown[], params: P, ctx: StepContext): O | Promise<O>;
  /** A few words on the output for the progress line, such as "3,120 rows". */
  summary?(output: O): string;
}

/** One planned run of a step: pure data, so another process could run it from this alone. */
export interface StepInstance {
  /** Readable, unique label, such as "clean[1] drop_missing". */
  id: string;
  kind: string;
  params: unknown;
  /** Ids of the instances whose outputs are this one's inputs, in order. */
  inputs: string[];
  /** Not part of the key: absolute file paths, recipe positions. */
  locator: Record<string, string>;
  /** SHA-256 of kind, version, params, seed, software fingerprint and the inputs' keys: the cache address. */
  key: string;
  /** The same without the software fingerprint: what random generators are seeded from. */
  seedKey: string;
}
