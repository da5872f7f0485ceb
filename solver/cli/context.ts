/** Why a command was asked to stop before it finished: a signal, or its standard output closed (e.g. `| head`). */
export type StopReason = "SIGINT" | "SIGTERM" | "closed-output";

/** Exit codes of a stopped command, as a shell reports a process ended by the signal: 128 + its number (common practice, no source). */
export const STOP_EXIT_CODES: Record<StopReason, number> = { SIGINT: 130, SIGTERM: 143, "closed-output": 141 };

/** What a command gets besides its arguments and output functions. */
export interface CliContext {
  /** Polled between time steps; non-null once the user asked to stop. */
  stopReason(): StopReason | null;
  /** The shared integer behind `stopReason()` when there is one (non-zero = stop), handed on to worker threads (`jobs.ts`). */
  stopFlag?: Int32Array;
}

/**
 * The terminal behind stderr: whether it is one, its width, and how to write to it without a newline (a worker
 * thread replaces these: its own stderr is a pipe that moves only when its event loop turns).
 */
export const terminal = {
  stderrIsTTY: process.stderr.isTTY === true,
  columns: process.stderr.columns ?? 120,
  writeErr: (s: string): void => { process.stderr.write(s); },
};

export const NEVER_STOP: CliContext = { stopReason: () => null };
