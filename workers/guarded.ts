/** How a worker hands an exception back across comlink: a plain object naming the solver's code and field. */
import type { WorkerFailure } from "./protocol.js";

export function failure(e: unknown): WorkerFailure {
  if (e && typeof e === "object" && (e as { name?: string }).name === "SolverError") {
    const s = e as { code: string; field?: string; message: string };
    return { name: "SolverError", code: s.code, field: s.field, message: s.message };
  }
  return { name: "WorkerError", code: "internal", message: e instanceof Error ? e.message : String(e) };
}

/** Run `f`, turning any exception into a rejected promise carrying a WorkerFailure. */
export function guarded<A extends unknown[], R>(f: (...a: A) => R): (...a: A) => R {
  return (...a: A) => {
    try {
      return f(...a);
    } catch (e) {
      throw failure(e);
    }
  };
}
