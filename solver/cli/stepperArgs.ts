import type { Scenario, StepperSpec } from "../scenario/schema.js";
import { numberOption, stringOption, type ParsedArgs } from "./args.js";

/** CLI options that become stepper options in the scenario's `stepper` object. */
export const STEPPER_OPTION_KEYS = ["linear", "backend", "tolerance", "substeps", "filter", "passes"] as const;
export const STEPPER_CLI_OPTIONS = ["method", "dt", ...STEPPER_OPTION_KEYS] as const;

/**
 * The scenario's stepper, overridden by --method/--dt and the option flags. A different method drops the
 * scenario's method-specific options.
 */
export function stepperFromArgs(s: Scenario, args: ParsedArgs): StepperSpec {
  const method = stringOption(args, "method");
  const dt = numberOption(args, "dt", { positive: true });
  const base: StepperSpec = method && method !== s.stepper.method ? { method, dt: s.stepper.dt } : { ...s.stepper };
  if (dt !== undefined) base.dt = dt;
  for (const key of STEPPER_OPTION_KEYS) {
    const v = stringOption(args, key);
    if (v === undefined) continue;
    const num = Number(v);
    (base as Record<string, unknown>)[key] = v.trim() !== "" && Number.isFinite(num) && key !== "linear" && key !== "backend" ? num : v;
  }
  return base;
}
