import { SolverError } from "../errors.js";

/** Progress of a study: fraction of the work done (0…1), runs finished, runs planned, and what runs now. */
export interface StudyProgress {
  fraction: number;
  done: number;
  total: number;
  item: string;
}

/** What every study accepts besides its own inputs. The engine never reads a clock or prints. */
export interface StudyHooks {
  /** Wall clock in seconds (the caller's, e.g. performance.now()/1000); without it wall times are 0. */
  clock?: () => number;
  /** Called between runs and at chunk ends inside runs. Return false to cancel at the next run boundary. */
  onProgress?: (p: StudyProgress) => boolean | void;
  /** Polled between runs; true cancels the study (a SolverError with code "cancelled"). */
  shouldCancel?: () => boolean;
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

  /** Throws if a cancellation was asked for; call only between runs. */
  checkpoint(): void {
    if (this.cancelRequested || this.hooks.shouldCancel?.()) throw new SolverError("cancelled", "study cancelled between runs");
  }
}

/** A stepper's default label: the method and its options in the `--methods` syntax, e.g. `exprb32(backend=krylov;linear=modes:1)`. */
export function defaultLabel(spec: Record<string, unknown>): string {
  const opts = Object.keys(spec).filter((k) => k !== "method" && k !== "dt" && k !== "label" && k !== "module").sort();
  if (!opts.length) return String(spec.method);
  const val = (v: unknown) => (typeof v === "object" && v !== null ? JSON.stringify(v) : String(v));
  return `${String(spec.method)}(${opts.map((k) => `${k}=${val(spec[k])}`).join(";")})`;
}
