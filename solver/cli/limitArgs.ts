import { LIMITS, withLimits, type Limits } from "../scenario/limits.js";
import { numberOption, type ParsedArgs } from "./args.js";

/** CLI options that raise a declared bound (see LIMITS in solver/scenario/limits.ts). */
export const LIMIT_OPTIONS = ["max-steps", "max-cells", "max-memory"] as const;

export const LIMIT_USAGE = "[--max-steps N] [--max-cells N] [--max-memory BYTES]";

/** The declared limits, with the bounds the user raised on the command line. */
export function limitsFromArgs(args: ParsedArgs): Limits {
  const steps = numberOption(args, "max-steps", { positive: true, integer: true });
  const cells = numberOption(args, "max-cells", { positive: true, integer: true });
  const memoryBytes = numberOption(args, "max-memory", { positive: true });
  if (steps === undefined && cells === undefined && memoryBytes === undefined) return LIMITS;
  return withLimits({ steps, cells, memoryBytes });
}
