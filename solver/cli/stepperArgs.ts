import type { Scenario, StepperSpec } from "../scenario/schema.js";
import type { StepperDefinition } from "../time/interface.js";
import { coerceOptionText } from "../time/options.js";
import { getMethod, listMethods } from "../time/registry.js";
import { SolverError } from "../errors.js";
import { numberOption, stringOption, type ParsedArgs } from "./args.js";

/**
 * CLI flags that become stepper options: every option key declared by a built-in stepper (read from the
 * registry, so a new declared option is a new flag), plus `--option key=value` for any declared key —
 * which is how a user module's own options are given.
 */
export const STEPPER_OPTION_KEYS: readonly string[] = [...new Set(listMethods().flatMap((m) => Object.keys(m.options ?? {})))];
export const STEPPER_CLI_OPTIONS = ["method", "dt", "stepper-module", "option", ...STEPPER_OPTION_KEYS] as const;

/** `key=value` pairs of the repeatable `--option` flag. */
export function optionPairs(args: ParsedArgs): [string, string][] {
  return (args.multi.get("option") ?? []).map((p) => {
    const eq = p.indexOf("=");
    if (eq <= 0) throw new SolverError("bad-input", `--option: "${p}" is not key=value`, "--option");
    return [p.slice(0, eq).trim(), p.slice(eq + 1)];
  });
}

/**
 * The scenario's stepper, overridden by --method/--dt/--stepper-module and the option flags. A different
 * method drops the scenario's method-specific options. `definition` is the user module's, when one is given.
 */
export function stepperFromArgs(s: Scenario, args: ParsedArgs, definition?: StepperDefinition, moduleKey?: string): StepperSpec {
  const method = stringOption(args, "method");
  const dt = numberOption(args, "dt", { positive: true });
  if (method && moduleKey) throw new SolverError("bad-input", "--method: give either --method or --stepper-module, not both", "--method");
  let base: StepperSpec;
  if (moduleKey && definition) base = { method: definition.name, module: moduleKey, dt: s.stepper.dt };
  else if (method && method !== s.stepper.method) base = { method, dt: s.stepper.dt };
  else base = { ...s.stepper };
  if (dt !== undefined) base.dt = dt;
  let decl: StepperDefinition | undefined = definition;
  if (!decl && !base.module) { try { decl = getMethod(base.method); } catch { decl = undefined; } }
  const set = (key: string, text: string) => {
    const spec = decl?.options?.[key];
    (base as Record<string, unknown>)[key] = coerceOptionText(spec, text);
  };
  for (const key of STEPPER_OPTION_KEYS) {
    const v = stringOption(args, key);
    if (v !== undefined) set(key, v);
  }
  for (const [k, v] of optionPairs(args)) set(k, v);
  return base;
}
