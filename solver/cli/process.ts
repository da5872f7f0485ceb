/**
 * The command line as a process. The command runs in a worker thread so that the main thread stays free to hear
 * signals (Node delivers them through the event loop, which a long synchronous computation would block) and to
 * notice a closed output pipe. A stop request reaches the worker through one shared integer that the run loops
 * poll before every time step, so a run or study stops within one step and writes what finished. A single step
 * cannot be cut short (the solver has no clock and no interrupt points inside a step); if one step takes longer
 * than the user will wait, a second signal ends the process at once.
 *
 * Output goes to the main thread as messages (`postMessage` is delivered while the worker computes; the worker's
 * own stdout would only move when its event loop turns, i.e. at the end).
 */
import { constants } from "node:os";
import { parentPort, Worker, workerData } from "node:worker_threads";
import { terminal, type CliContext, type StopReason } from "./context.js";

interface WorkerInput {
  argv: string[];
  /** [0]: 0 while running, else the number of the signal that asks to stop (SIGPIPE for a closed output). */
  flag: Int32Array;
  stderrIsTTY: boolean;
  columns: number;
  /** URL of this module, and of tsx's loader API when running from TypeScript source. */
  entry: string;
  tsxApi: string | null;
}

type Message = { out: string } | { err: string } | { code: number };

const SIGNALS = constants.signals;
const REPEAT_WINDOW_MS = 1000;
const REASON_OF: Record<number, StopReason> = { [SIGNALS.SIGINT]: "SIGINT", [SIGNALS.SIGTERM]: "SIGTERM", [SIGNALS.SIGPIPE]: "closed-output" };

/** Worker bootstrap (CommonJS, evaluated). Node 20 does not carry the TypeScript loader into workers, so it is registered here. */
const BOOT = `
const { workerData } = require("node:worker_threads");
(async () => {
  if (workerData.tsxApi) (await import(workerData.tsxApi)).register();
  await (await import(workerData.entry)).workerMain();
})().catch((e) => { process.stderr.write("stepwell: internal error: " + ((e && e.message) || e) + "\\n"); process.exitCode = 1; });
`;

/**
 * Main thread: start the command in a worker, write its output, turn SIGINT, SIGTERM and a closed stdout into a
 * stop request, and exit with the command's code — or 128 + the signal's number if a signal asked to stop.
 */
export function launch(argv: readonly string[]): void {
  const flag = new Int32Array(new SharedArrayBuffer(4));
  let tsxApi: string | null = null;
  if (/\.[cm]?ts$/.test(import.meta.url)) {
    try { tsxApi = import.meta.resolve("tsx/esm/api"); } catch { /* no loader to register: running compiled code */ }
  }
  const input: WorkerInput = { argv: [...argv], flag, stderrIsTTY: terminal.stderrIsTTY, columns: terminal.columns, entry: import.meta.url, tsxApi };
  const worker = new Worker(BOOT, { eval: true, workerData: input });

  let outOpen = true;
  let errOpen = true;
  let signalled: "SIGINT" | "SIGTERM" | null = null;
  let code: number | null = null;
  const requestStop = (signum: number) => { Atomics.compareExchange(flag, 0, 0, signum); };
  const writeErr = (s: string) => { if (errOpen) process.stderr.write(s); };

  // A reader that stops reading (`| head`) closes the pipe and later writes fail with EPIPE: stop writing, ask
  // the command to stop as SIGPIPE would have, and end without a stack trace.
  process.stdout.on("error", () => { outOpen = false; requestStop(SIGNALS.SIGPIPE); });
  process.stderr.on("error", () => { errOpen = false; });

  worker.on("message", (m: Message) => {
    if ("out" in m) { if (outOpen) process.stdout.write(m.out); } else if ("err" in m) writeErr(m.err);
    else if ("code" in m) code = m.code;
  });
  worker.on("error", (e) => {
    writeErr(`stepwell: internal error: ${(e as Error)?.message ?? String(e)}\n`);
    code = 1;
  });
  worker.on("exit", (workerCode) => {
    process.exitCode = signalled ? 128 + SIGNALS[signalled] : code ?? (workerCode || 1);
  });

  let signalledAt = 0;
  const onSignal = (sig: "SIGINT" | "SIGTERM") => {
    if (signalled) {
      // Under `npm run`, a Ctrl-C reaches this process twice at once (from the terminal and forwarded by npm):
      // a repeat within the first second is the same request.
      if (Date.now() - signalledAt < REPEAT_WINDOW_MS) return;
      writeErr(`\nstepwell: ${sig} again: stopping at once; the step in progress is lost\n`);
      process.exit(128 + SIGNALS[signalled]);
    }
    signalled = sig;
    signalledAt = Date.now();
    requestStop(SIGNALS[sig]);
    writeErr(`\nstepwell: ${sig}: stopping after the step in progress and writing what finished (send it again after a second to stop at once)\n`);
  };
  process.on("SIGINT", onSignal);
  process.on("SIGTERM", onSignal);
}

/** Worker thread: run the command with output sent as messages and a context that reads the shared stop flag. */
export async function workerMain(): Promise<void> {
  const input = workerData as WorkerInput;
  const post = (m: Message) => parentPort!.postMessage(m);
  terminal.stderrIsTTY = input.stderrIsTTY;
  terminal.columns = input.columns;
  terminal.writeErr = (s) => post({ err: s });
  const ctx: CliContext = { stopReason: () => REASON_OF[Atomics.load(input.flag, 0)] ?? null, stopFlag: input.flag };
  const { main } = await import("./main.js");
  const code = await main(input.argv, (s) => post({ out: s + "\n" }), (s) => post({ err: s + "\n" }), ctx);
  post({ code });
}
