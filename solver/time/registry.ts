/**
 * The list of built-in steppers: every test, the CLI and the sandbox iterate over it. Each entry is a
 * `StepperDefinition`, the same shape a user module exports.
 */
import { SolverError } from "../errors.js";
import { checkTableau, explicitRkDefinition, explicitRkInstance, MAX_STAGES } from "./explicitRk.js";
import { EXPLICIT_TABLEAUX, type ButcherTableau } from "./tableaux.js";
import { SPLIT_EXPLICIT_METHOD } from "./splitExplicit.js";
import type { Problem, StepperDefinition } from "./interface.js";
import type { Stepper } from "./types.js";
import { EXPONENTIAL_METHODS } from "./exponentialMethods.js";
import { EXP_AB2 } from "./exponentialMultistep.js";
import { IMEX_METHODS } from "./imex.js";
import { instantiate } from "./instantiate.js";
import { moduleDefinition } from "./userModules.js";

/** @deprecated name kept for callers: a registry entry is a stepper definition. */
export type MethodEntry = StepperDefinition;

const tableauSchemaHelp = '{ "a": [[], [a10], [a20, a21], …], "b": [b0, …], "c": [c0, …], "order": p }';

/** Parse and check a user Butcher tableau (the `tableau` option of custom-rk). */
function parseTableau(raw: unknown, field: string): ButcherTableau {
  if (!raw || typeof raw !== "object" || Array.isArray(raw)) throw new SolverError("bad-tableau", `${field}: must be an object ${tableauSchemaHelp}`, field);
  const t = raw as Record<string, unknown>;
  const nums = (key: string): number[] => {
    const v = t[key];
    if (!Array.isArray(v) || !v.every((x) => typeof x === "number")) throw new SolverError("bad-tableau", `${field}.${key}: must be an array of numbers`, `${field}.${key}`);
    if (v.length > MAX_STAGES) throw new SolverError("bad-tableau", `${field}.${key}: has ${v.length} entries; the limit is ${MAX_STAGES} stages`, `${field}.${key}`);
    return v as number[];
  };
  const a = t.a;
  if (!Array.isArray(a) || a.length > MAX_STAGES || !a.every((row) => Array.isArray(row) && row.every((x) => typeof x === "number"))) {
    throw new SolverError("bad-tableau", `${field}.a: must be an array of at most ${MAX_STAGES} rows of numbers (strictly lower-triangular)`, `${field}.a`);
  }
  const order = t.order === undefined ? 1 : t.order;
  if (typeof order !== "number" || !Number.isInteger(order) || order < 1 || order > MAX_STAGES) throw new SolverError("bad-tableau", `${field}.order: must be a whole number from 1 to ${MAX_STAGES}`, `${field}.order`);
  const tab: ButcherTableau = {
    name: typeof t.name === "string" ? t.name : "custom-rk", order, reference: "user tableau",
    a: a as number[][], b: nums("b"), c: nums("c"),
  };
  checkTableau(tab, field);
  return tab;
}

const CUSTOM_RK: StepperDefinition = {
  name: "custom-rk", family: "explicit", order: 1,
  description: `any explicit Runge–Kutta method given as "tableau": ${tableauSchemaHelp}`,
  options: {
    tableau: { type: "json", label: "tableau (JSON)", help: `the Butcher tableau as ${tableauSchemaHelp}`, parse: (v, field) => parseTableau(v, field) },
  },
  create(problem, o, ctx) {
    const tab = o.tableau as ButcherTableau | undefined;
    if (!tab) throw new SolverError("bad-tableau", `${ctx.field}.tableau: is required for method "custom-rk": ${tableauSchemaHelp}`, `${ctx.field}.tableau`);
    return { ...explicitRkInstance(tab, problem, `custom-rk (${tab.name})`), order: tab.order };
  },
};

const entries = new Map<string, StepperDefinition>();

export function registerMethod(e: StepperDefinition): void {
  entries.set(e.name, e);
}

registerMethod(explicitRkDefinition(EXPLICIT_TABLEAUX[0], "classical fourth-order Runge–Kutta, 4 tendency evaluations per step"));
registerMethod(explicitRkDefinition(EXPLICIT_TABLEAUX[1], "three-stage strong-stability-preserving Runge–Kutta, order 3"));
registerMethod(CUSTOM_RK);
registerMethod(SPLIT_EXPLICIT_METHOD);
for (const e of EXPONENTIAL_METHODS) registerMethod(e);
registerMethod(EXP_AB2);
for (const e of IMEX_METHODS) registerMethod(e);

export function methodNames(): string[] {
  return [...entries.keys()];
}

export function listMethods(): StepperDefinition[] {
  return [...entries.values()];
}

export function getMethod(name: string, field = "stepper.method"): StepperDefinition {
  const e = entries.get(name);
  if (!e) throw new SolverError("bad-input", `${field}: unknown method "${name}"; known methods: ${methodNames().join(", ")}`, field);
  return e;
}

/** RK4's imaginary-axis bound 2√2, from its tableau (the one place the Δt limits of the page and CLI come from). */
export function rk4ImaginaryBound(): number {
  return getMethod("rk4").imaginaryAxisBound!;
}

/** The definition a spec names: its loaded user module, or the registered method. */
export function definitionOf(spec: { method?: unknown; module?: unknown }, field = "stepper"): StepperDefinition {
  if (typeof spec.module === "string") return moduleDefinition(spec.module, `${field}.module`).definition;
  return getMethod(String(spec.method), `${field}.method`);
}

export interface CreateStepperOptions {
  /** Field prefix for messages (default "stepper"). */
  field?: string;
  /** A definition to use instead of the registry entry named by spec.method (user modules). */
  definition?: StepperDefinition;
  /** Where a user definition came from (file or URL), to locate its faults. */
  origin?: string;
}

/** Build the stepper a spec asks for on a problem, rejecting options the method does not declare. */
export function createStepper(problem: Problem, spec: Record<string, unknown>, o: CreateStepperOptions = {}): Stepper {
  const field = o.field ?? "stepper";
  if (!o.definition && typeof spec.module === "string") {
    const m = moduleDefinition(spec.module, `${field}.module`);
    return instantiate(m.definition, problem, spec, { field, origin: m.origin });
  }
  const def = o.definition ?? getMethod(String(spec.method), `${field}.method`);
  return instantiate(def, problem, spec, { field, origin: o.origin });
}
