/**
 * `--jobs N`: the independent runs of a study in N worker threads (node:worker_threads; the platform's own
 * threads are enough here — every task is one slice of a study, started once, so a pool library would add
 * nothing). A task names a module and a function that computes one slice (`--shard`-style) of the study from the
 * same parsed arguments; the caller joins the slices with the study's merge function, which gives exactly the
 * result of one thread (row order, fits), all but wall-clock fields.
 *
 * Every worker reads the one shared stop integer (the process's own, or one this module keeps in step with the
 * caller's `stopReason()`), so a stop request reaches all of them before their next time step. A worker reports
 * progress as messages (at most one per PROGRESS_INTERVAL_MS); the caller draws one bar for the whole study. An
 * error in any worker ends the others at once and is raised in the calling thread: a `SolverError` keeps its
 * code and field (one line, exit 2), anything else is an internal error.
 */
import { availableParallelism } from "node:os";
import { createRequire } from "node:module";
import { pathToFileURL } from "node:url";
import { parentPort, Worker, workerData } from "node:worker_threads";
import { SolverError, type SolverErrorCode } from "../errors.js";
import type { StudyHooks, StudyProgress } from "../studies/common.js";
import type { Shard } from "../studies/shard.js";
import { stringOption, type ParsedArgs } from "./args.js";
import type { CliContext } from "./context.js";

/** Largest `--jobs`: more threads than this only add memory (every worker holds its own copy of the problem). */
export const MAX_JOBS = 64;

/** `--jobs N`: a whole number 1 … MAX_JOBS; default the machine's cores (`os.availableParallelism()`), at most MAX_JOBS. */
export function jobsFromArgs(args: ParsedArgs): number {
  const text = stringOption(args, "jobs");
  if (text === undefined) return Math.max(1, Math.min(availableParallelism(), MAX_JOBS));
  const n = Number(text);
  if (text.trim() === "" || !Number.isInteger(n) || n < 1 || n > MAX_JOBS) {
    throw new SolverError("bad-input", `--jobs: must be a whole number from 1 to ${MAX_JOBS} (worker threads), got "${text}"`, "--jobs");
  }
  return n;
}

/** `--jobs` beside `--shard`: a slice runs in one thread (run more slices for more threads). */
export function jobsForShard(args: ParsedArgs, sharded: boolean): number {
  const jobs = jobsFromArgs(args);
  if (!sharded) return jobs;
  if (args.options.has("jobs") && jobs > 1) {
    throw new SolverError("bad-input", "--jobs: a --shard slice runs in one thread; give --jobs 1 or leave it out, and run more slices instead", "--jobs");
  }
  return 1;
}

/** What a slice function gets besides the parsed arguments: the slice, the caller's payload and hooks. */
export type SliceFunction = (args: ParsedArgs, shard: Shard, payload: unknown, hooks: StudyHooks) => unknown;

export interface WorkerTask {
  /** URL of the module that exports `fn` (the command's own `import.meta.url`). */
  module: string;
  fn: string;
  shard: Shard;
  /** Structured-cloneable input of the slice (e.g. a reference run computed once by the caller). */
  payload?: unknown;
}

/** How one task ended: its result, or what it had finished when a stop request came. */
export type TaskOutcome<R, P> = { result: R } | { interrupted: P };

interface JobInput {
  args: ParsedArgs;
  task: WorkerTask;
  flag: Int32Array;
  entry: string;
  tsxApi: string | null;
}

type JobMessage =
  | { progress: StudyProgress }
  | { result: unknown }
  | { interrupted: unknown }
  | { warning: string }
  | { error: { message: string; code?: SolverErrorCode; field?: string } };

const PROGRESS_INTERVAL_MS = 100;
const STOP_POLL_MS = 20;

/** Worker bootstrap (CommonJS, evaluated): registers the TypeScript loader when running from source, then runs the slice. */
const BOOT = `
const { workerData } = require("node:worker_threads");
(async () => {
  if (workerData.tsxApi) (await import(workerData.tsxApi)).register();
  await (await import(workerData.entry)).jobWorkerMain();
})().catch((e) => { require("node:worker_threads").parentPort.postMessage({ error: { message: String((e && e.message) || e) } }); });
`;

function tsxLoader(): string | null {
  if (!/\.[cm]?ts$/.test(import.meta.url)) return null;
  try {
    return import.meta.resolve("tsx/esm/api");
  } catch { /* a host without import.meta.resolve (a test runner): the package's CommonJS entry tells where its ES module is */ }
  try {
    return pathToFileURL(createRequire(import.meta.url).resolve("tsx/esm/api").replace(/\.cjs$/, ".mjs")).href;
  } catch {
    return null;
  }
}

/**
 * Run the tasks, one worker thread each, and return their outcomes in task order. `onProgress` gets the latest
 * progress of every task (the caller knows how they add up to the whole study). A stop request stops every
 * worker; the outcomes then hold what each had finished.
 */
export async function runTasks<R, P>(args: ParsedArgs, tasks: readonly WorkerTask[], ctx: CliContext,
  onProgress?: (latest: readonly (StudyProgress | undefined)[], item: string) => void, onWarning?: (message: string) => void): Promise<TaskOutcome<R, P>[]> {
  const flag = ctx.stopFlag ?? new Int32Array(new SharedArrayBuffer(4));
  // a caller without a shared flag (tests, an embedding program) is polled and its answer copied into ours
  const poll = ctx.stopFlag ? null : setInterval(() => { if (ctx.stopReason() !== null) Atomics.store(flag, 0, 1); }, STOP_POLL_MS);
  const tsxApi = tsxLoader();
  const latest: (StudyProgress | undefined)[] = tasks.map(() => undefined);
  const workers: Worker[] = [];
  const outcomes: TaskOutcome<R, P>[] = new Array(tasks.length);
  try {
    await new Promise<void>((resolve, reject) => {
      let open = tasks.length;
      let failed = false;
      const fail = (e: Error) => {
        if (failed) return;
        failed = true;
        reject(e);
      };
      tasks.forEach((task, i) => {
        const input: JobInput = { args, task, flag, entry: import.meta.url, tsxApi };
        const w = new Worker(BOOT, { eval: true, workerData: input });
        workers.push(w);
        let settled = false;
        const settle = () => { if (!settled) { settled = true; if (--open === 0) resolve(); } };
        w.on("message", (m: JobMessage) => {
          if ("progress" in m) {
            latest[i] = m.progress;
            onProgress?.(latest, m.progress.item);
          } else if ("warning" in m) onWarning?.(m.warning);
          else if ("result" in m) { outcomes[i] = { result: m.result as R }; settle(); }
          else if ("interrupted" in m) { outcomes[i] = { interrupted: m.interrupted as P }; settle(); }
          else if ("error" in m) {
            const e = m.error;
            fail(e.code ? new SolverError(e.code, e.message, e.field) : new Error(e.message));
          }
        });
        w.on("error", (e) => fail(e instanceof Error ? e : new Error(String(e))));
        w.on("exit", (code) => { if (!settled) fail(new Error(`worker thread ${i + 1} ended (exit code ${code}) without a result`)); });
      });
    });
  } finally {
    if (poll) clearInterval(poll);
    // no worker outlives the study: finished ones are ended as well (terminate on an ended worker is a no-op)
    await Promise.all(workers.map((w) => w.terminate()));
  }
  return outcomes;
}

/** Worker side: run the slice named by the task with hooks wired to the shared stop integer and progress messages. */
export async function jobWorkerMain(): Promise<void> {
  const input = workerData as JobInput;
  const post = (m: JobMessage) => parentPort!.postMessage(m);
  const { StudyInterrupted } = await import("../studies/common.js");
  let last = -Infinity;
  const hooks: StudyHooks = {
    clock: () => performance.now() / 1000,
    shouldCancel: () => Atomics.load(input.flag, 0) !== 0,
    onWarning: (warning) => post({ warning }),
    onProgress: (p) => {
      const now = performance.now();
      if (now - last < PROGRESS_INTERVAL_MS && p.fraction < 1) return;
      last = now;
      post({ progress: { ...p } });
    },
  };
  try {
    const { preloadModules } = await import("./modules.js");
    await preloadModules(input.args);
    const mod = (await import(input.task.module)) as Record<string, SliceFunction>;
    const result = await mod[input.task.fn](input.args, input.task.shard, input.task.payload, hooks);
    post({ result });
  } catch (e) {
    if (e instanceof StudyInterrupted) post({ interrupted: e.partial });
    else if (e instanceof SolverError && e.code !== "cancelled") post({ error: { message: e.message, code: e.code, field: e.field } });
    else if (e instanceof SolverError) post({ interrupted: null });
    else post({ error: { message: (e as Error)?.message ?? String(e) } });
  }
}
