/** The one error type Stepwell throws at its boundaries (scenario files, CLI arguments, worker calls). */
export type SolverErrorCode = "bad-input" | "bad-tableau" | "bad-mesh" | "non-finite" | "breakdown" | "cancelled" | "stepper-fault";

export class SolverError extends Error {
  constructor(
    readonly code: SolverErrorCode,
    message: string,
    /** Path of the offending field, e.g. `layers[1].density` or `--dt`. */
    readonly field?: string,
  ) {
    super(message);
    this.name = "SolverError";
  }
}

export function badInput(field: string, message: string): SolverError {
  return new SolverError("bad-input", `${field}: ${message}`, field);
}
