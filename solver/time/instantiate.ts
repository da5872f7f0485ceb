/**
 * From a stepper definition and a spec to a running stepper: options validated against the declaration,
 * `create` called once, work counted by the problem, and faults of the stepper's own code (a throwing
 * `create` or `step`, a wrong shape) turned into one located message.
 */
import { SolverError } from "../errors.js";
import type { Problem, StepperDefinition, StepperInstance } from "./interface.js";
import { validateOptions } from "./options.js";
import type { StepStats, Stepper } from "./types.js";

/** Where a fault points in the stepper's own code: "file:line:col" of the first stack frame in `origin`. */
export function locateFault(err: unknown, origin?: string): string | undefined {
  const stack = err instanceof Error ? err.stack ?? "" : "";
  if (!origin) return undefined;
  const base = origin.replace(/^file:\/\//, "");
  for (const line of stack.split("\n")) {
    if (!line.includes(base) && !line.includes(origin)) continue;
    const m = /((?:file:\/\/)?[^\s()]+):(\d+):(\d+)/.exec(line);
    if (m) return `${m[1].replace(/^file:\/\//, "").replace(/\?[\w-]+$/, "")}:${m[2]}:${m[3]}`;
  }
  return undefined;
}

/** A SolverError for a fault in a stepper's code, naming the stepper, the phase and the place. */
export function stepperFault(err: unknown, name: string, phase: string, origin?: string): SolverError {
  if (err instanceof SolverError && err.code !== "stepper-fault" && phase === "create") return err;
  if (err instanceof SolverError && err.code === "stepper-fault") return err;
  const msg = err instanceof Error ? `${err.name === "Error" ? "" : err.name + ": "}${err.message}` : String(err);
  const at = locateFault(err, origin);
  return new SolverError("stepper-fault", `stepper "${name}": ${phase} threw: ${msg}${at ? ` (at ${at})` : ""}`, "stepper");
}

export interface InstantiateOptions {
  /** Field prefix for messages (default "stepper"). */
  field?: string;
  /** The file or URL the definition came from (user modules): faults are located in it. */
  origin?: string;
}

/** Validate `spec` against `def`, create the stepper on `problem`, and wrap it with counted stats. */
export function instantiate(def: StepperDefinition, problem: Problem, spec: Record<string, unknown>, o: InstantiateOptions = {}): Stepper {
  const field = o.field ?? "stepper";
  const options = validateOptions(def, spec, { nLayers: problem.layout.nLayers }, field);
  const dt = typeof spec.dt === "number" ? spec.dt : undefined;
  let inst: StepperInstance;
  try {
    inst = def.create(problem, options, { field, dt });
  } catch (e) {
    throw stepperFault(e, def.name, "create", o.origin);
  }
  if (!inst || typeof inst !== "object" || typeof inst.step !== "function") {
    throw new SolverError("stepper-fault", `stepper "${def.name}": create must return an object with a step(x, t, dt) method, got ${inst === null ? "null" : typeof inst}`, field);
  }
  const c = problem.counters;
  const base = { rhs: c.tendencyEvaluations, mv: c.matvecs, ip: c.innerProducts, phi: c.phiActions };
  let steps = 0;
  const stats: StepStats = {
    get steps() { return steps; },
    get rhsEvaluations() { return c.tendencyEvaluations - base.rhs; },
    get matvecs() { return c.matvecs - base.mv; },
    get innerProducts() { return c.innerProducts - base.ip; },
    get phiActions() { return c.phiActions - base.phi; },
  } as StepStats;
  const user = o.origin !== undefined;
  const label = typeof inst.label === "string" ? inst.label : def.name;
  return {
    method: def.name,
    label,
    order: typeof inst.order === "number" ? inst.order : def.order,
    note: inst.note,
    stats,
    definition: def,
    instance: inst,
    step: user
      ? (x, t, h) => {
        try {
          inst.step(x, t, h);
        } catch (e) {
          throw stepperFault(e, def.name, `step at t = ${t} s`, o.origin);
        }
        steps++;
      }
      : (x, t, h) => {
        inst.step(x, t, h);
        steps++;
      },
  };
}
