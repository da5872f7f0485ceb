/**
 * UI side of the solver worker: one queue of calls (so a stepper change never lands inside a chunk), every call
 * raced against the worker's death and a time limit, and a restart when the worker dies.
 */
import { wrap, type Remote } from "comlink";
import type { SimulationApi } from "./simulation.worker.js";
import type { WorkerFailure } from "./protocol.js";

export type SolverRemote = Remote<SimulationApi>;

export interface SolverClientOptions {
  /**
   * Called when the worker died: with gaveUp = false a fresh one was started (the caller re-initialises it);
   * with gaveUp = true it kept dying right away (e.g. its code fails to load) and no further one is started.
   */
  onRestart: (reason: string, gaveUp: boolean) => void;
  /** Longest a call may take before the worker is declared dead [ms]. */
  callTimeoutMs?: number;
}

export function isWorkerFailure(e: unknown): e is WorkerFailure {
  return !!e && typeof e === "object" && typeof (e as WorkerFailure).message === "string" && typeof (e as WorkerFailure).code === "string";
}

export function failureMessage(e: unknown): string {
  if (isWorkerFailure(e)) return e.message;
  if (e instanceof Error) return e.message;
  return String(e);
}

/** How a restart after a call's time-out is worded (the owner tells it from other deaths by this). */
const TIMEOUT_REASON = "the solver did not answer within";
export const isTimeoutReason = (reason: string) => reason.startsWith(TIMEOUT_REASON);

export class SolverClient {
  private worker!: Worker;
  private remote!: SolverRemote;
  private queue: Promise<unknown> = Promise.resolve();
  private died!: Promise<never>;
  private killDeath!: (reason: string) => void;
  private disposed = false;
  private gaveUp = false;
  private readonly restartTimes: number[] = [];
  restarts = 0;

  constructor(private readonly opts: SolverClientOptions) {
    this.spawn();
  }

  private spawn(): void {
    this.worker = new Worker(new URL("./simulation.worker.ts", import.meta.url), { type: "module", name: "stepwell-solver" });
    this.remote = wrap<SimulationApi>(this.worker);
    this.died = new Promise<never>((_, reject) => {
      this.killDeath = (reason: string) => reject({ name: "WorkerError", code: "worker-died", message: reason } satisfies WorkerFailure);
    });
    this.died.catch(() => undefined);
    const w = this.worker;
    w.addEventListener("error", (ev) => {
      ev.preventDefault();
      if (w === this.worker) this.restart(`the solver stopped unexpectedly (${ev.message || "worker error"})`);
    });
    w.addEventListener("messageerror", () => {
      if (w === this.worker) this.restart("the solver sent a message that could not be read");
    });
  }

  /** End the current worker, fail its pending calls, start a fresh one and tell the owner. */
  restart(reason: string): void {
    if (this.disposed || this.gaveUp) return;
    const kill = this.killDeath;
    this.worker.terminate();
    this.restarts++;
    const now = Date.now();
    this.restartTimes.push(now);
    while (this.restartTimes.length && now - this.restartTimes[0] > 10_000) this.restartTimes.shift();
    this.queue = Promise.resolve();
    if (this.restartTimes.length > 3) {
      // three deaths in ten seconds: starting another would only loop; every later call fails at once
      this.gaveUp = true;
      kill(reason);
      this.opts.onRestart(reason, true);
      return;
    }
    this.spawn();
    kill(reason);
    this.opts.onRestart(reason, false);
  }

  /** Queue a call on the remote; it rejects with a WorkerFailure on solver errors, death or time-out. */
  call<T>(f: (r: SolverRemote) => Promise<T>, timeoutMs = this.opts.callTimeoutMs ?? 30_000): Promise<T> {
    if (this.gaveUp) return Promise.reject({ name: "WorkerError", code: "worker-died", message: "the solver worker could not be kept running" } satisfies WorkerFailure);
    const died = this.died;
    const remote = this.remote;
    const run = async (): Promise<T> => {
      let timer: ReturnType<typeof setTimeout> | undefined;
      const timeout = new Promise<never>((_, reject) => {
        timer = setTimeout(() => reject({ name: "WorkerError", code: "timeout", message: `${TIMEOUT_REASON} ${timeoutMs / 1000} s` }), timeoutMs);
      });
      try {
        return await Promise.race([f(remote), died, timeout]);
      } catch (e) {
        if (isWorkerFailure(e) && e.code === "timeout") this.restart(e.message);
        throw e;
      } finally {
        clearTimeout(timer);
      }
    };
    const p = this.queue.then(run, run);
    this.queue = p.catch(() => undefined);
    return p;
  }

  dispose(): void {
    this.disposed = true;
    this.worker.terminate();
  }
}
