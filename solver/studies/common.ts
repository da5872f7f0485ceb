import { SolverError } from "../errors.js";
import type { Run } from "../driver/run.js";

/** Progress of a study: fraction of the work done (0…1), runs finished, runs planned, and what runs now. */
export interface StudyProgress {
  fraction: number;
  done: number;
  total: number;
  item: string;
  /** What `done` and `total` count (default "runs"; the report card counts its four parts). */
  unit?: string;
}

/** What every study accepts besides its own inputs. The engine never reads a clock or prints. */
export interface StudyHooks {
  /** Wall clock in seconds (the caller's, e.g. performance.now()/1000); without it wall times are 0. */
  clock?: () => number;
  /** Called between runs and at chunk ends inside runs. Return false to stop the study (see `shouldCancel`). */
  onProgress?: (p: StudyProgress) => boolean | void;
  /**
   * Polled before every time step; true stops the study: the run in progress is abandoned and the study throws
   * `StudyInterrupted` carrying the runs that finished. A step already started is not cut short.
   */
  shouldCancel?: () => boolean;
  /** A study that changes what it was asked for (a Δt clamped or rounded) says so here, as well as in its result. */
  onWarning?: (message: string) => void;
}

/** A study stopped on request; `partial` holds what finished (its shape is the study's own). */
export class StudyInterrupted<T> extends SolverError {
  constructor(readonly partial: T, readonly done: number, readonly total: number) {
    super("cancelled", `interrupted with ${done} of ${total} runs finished`);
  }
}

export function isCancellation(e: unknown): e is SolverError {
  return e instanceof SolverError && e.code === "cancelled";
}

/** Tracks progress and cancellation for one study. */
export class StudyTracker {
  private cancelRequested = false;
  done = 0;
  constructor(private readonly hooks: StudyHooks, public total: number) {}

  get clock(): () => number { return this.hooks.clock ?? (() => 0); }

  report(item: string, within = 0): void {
    const total = Math.max(this.total, this.done + (within > 0 ? 1 : 0), 1);
    const fraction = Math.min(1, (this.done + Math.min(Math.max(within, 0), 1)) / total);
    if (this.hooks.onProgress?.({ fraction, done: this.done, total, item }) === false) this.cancelRequested = true;
  }

  get stopRequested(): boolean {
    return this.cancelRequested || this.hooks.shouldCancel?.() === true;
  }

  /** Throws a SolverError with code "cancelled" if a stop was asked for. */
  checkpoint(): void {
    if (this.stopRequested) throw new SolverError("cancelled", "study cancelled");
  }

  warn(message: string): void {
    this.hooks.onWarning?.(message);
  }
}

/**
 * Advance a run by up to `n` steps, one at a time, checking for a stop request before each (the same steps as
 * `run.advance(n)`, so results do not change). Returns false on a blow-up, throws on a stop request.
 */
export function advanceSteps(run: Run, n: number, tracker?: StudyTracker): boolean {
  if (!tracker) return run.advance(n);
  for (let s = 0; s < n; s++) {
    tracker.checkpoint();
    if (!run.advance(1)) return false;
  }
  return true;
}

/** A stepper's default label: the method and its options in the `--methods` syntax, e.g. `exprb32(backend=krylov;linear=modes:1)`. */
export function defaultLabel(spec: Record<string, unknown>): string {
  const opts = Object.keys(spec).filter((k) => k !== "method" && k !== "dt" && k !== "label" && k !== "module").sort();
  if (!opts.length) return String(spec.method);
  const val = (v: unknown) => (typeof v === "object" && v !== null ? JSON.stringify(v) : String(v));
  return `${String(spec.method)}(${opts.map((k) => `${k}=${val(spec[k])}`).join(";")})`;
}
