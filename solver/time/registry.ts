import { SolverError } from "../errors.js";
import type { ShallowWaterModel } from "../model/shallowWater.js";
import type { StepperSpec } from "../scenario/schema.js";
import type { VerticalModes } from "../diagnostics/modes.js";
import { checkTableau, explicitRk } from "./explicitRk.js";
import { EXPLICIT_TABLEAUX, type ButcherTableau } from "./tableaux.js";
import { SPLIT_EXPLICIT_METHOD } from "./splitExplicit.js";
import type { Stepper } from "./types.js";
import { EXPONENTIAL_METHODS } from "./exponentialMethods.js";

/** What a method factory gets: the model, the stepper spec from the scenario, and the vertical modes. */
export interface MethodContext {
  readonly model: ShallowWaterModel;
  readonly spec: StepperSpec;
  readonly modes: VerticalModes;
  /** Prefix for field names in error messages, e.g. "stepper". */
  readonly field: string;
}

export interface MethodEntry {
  readonly name: string;
  readonly family: "explicit" | "split-explicit" | "exponential" | "exponential-rosenbrock";
  readonly order: number;
  readonly description: string;
  /** Option keys the method accepts besides method, dt and label. */
  readonly options: readonly string[];
  /** Linear stability bound on the imaginary axis, |ω Δt| ≤ bound, if the method has one. */
  readonly imaginaryAxisBound?: number;
  /**
   * For methods that treat the barotropic mode separately: the bound |ω1 Δt| ≤ bound on the first baroclinic
   * gravity wave (ω1 = √6 c1/d on the hexagonal mesh) that then limits the long step.
   */
  readonly baroclinicAxisBound?: number;
  create(ctx: MethodContext): Stepper;
}

function explicitEntry(tab: ButcherTableau, bound: number, description: string): MethodEntry {
  return {
    name: tab.name, family: "explicit", order: tab.order, description, options: [], imaginaryAxisBound: bound,
    create: ({ model }) => explicitRk(tab, model),
  };
}

const tableauSchemaHelp = '{ "a": [[], [a10], [a20, a21], …], "b": [b0, …], "c": [c0, …], "order": p }';

function customRk(ctx: MethodContext): Stepper {
  const raw = (ctx.spec as Record<string, unknown>).tableau;
  const field = `${ctx.field}.tableau`;
  if (!raw || typeof raw !== "object") throw new SolverError("bad-tableau", `${field}: is required for method "custom-rk": ${tableauSchemaHelp}`, field);
  const t = raw as Record<string, unknown>;
  const nums = (key: string): number[] => {
    const v = t[key];
    if (!Array.isArray(v) || !v.every((x) => typeof x === "number")) throw new SolverError("bad-tableau", `${field}.${key}: must be an array of numbers`, `${field}.${key}`);
    return v as number[];
  };
  const a = t.a;
  if (!Array.isArray(a) || !a.every((row) => Array.isArray(row) && row.every((x) => typeof x === "number"))) {
    throw new SolverError("bad-tableau", `${field}.a: must be an array of rows of numbers (strictly lower-triangular)`, `${field}.a`);
  }
  const order = t.order === undefined ? 1 : t.order;
  if (typeof order !== "number" || !Number.isInteger(order) || order < 1) throw new SolverError("bad-tableau", `${field}.order: must be a whole number ≥ 1`, `${field}.order`);
  const tab: ButcherTableau = {
    name: typeof t.name === "string" ? t.name : "custom-rk", order, reference: "user tableau",
    a: a as number[][], b: nums("b"), c: nums("c"),
  };
  checkTableau(tab, field);
  const st = explicitRk(tab, ctx.model);
  return { ...st, method: "custom-rk", label: `custom-rk (${tab.name})`, step: st.step, stats: st.stats };
}

const entries = new Map<string, MethodEntry>();

export function registerMethod(e: MethodEntry): void {
  entries.set(e.name, e);
}

registerMethod(explicitEntry(EXPLICIT_TABLEAUX[0], 2 * Math.SQRT2, "classical fourth-order Runge–Kutta, 4 tendency evaluations per step"));
registerMethod(explicitEntry(EXPLICIT_TABLEAUX[1], Math.sqrt(3), "three-stage strong-stability-preserving Runge–Kutta, order 3"));
registerMethod({
  name: "custom-rk", family: "explicit", order: 1,
  description: `any explicit Runge–Kutta method given as "tableau": ${tableauSchemaHelp}`,
  options: ["tableau"], create: customRk,
});

export function methodNames(): string[] {
  return [...entries.keys()];
}

export function listMethods(): MethodEntry[] {
  return [...entries.values()];
}

export function getMethod(name: string, field = "stepper.method"): MethodEntry {
  const e = entries.get(name);
  if (!e) throw new SolverError("bad-input", `${field}: unknown method "${name}"; known methods: ${methodNames().join(", ")}`, field);
  return e;
}

/** Build the stepper a spec asks for, rejecting options the method does not know. */
export function createStepper(ctx: MethodContext): Stepper {
  const e = getMethod(ctx.spec.method, `${ctx.field}.method`);
  for (const key of Object.keys(ctx.spec)) {
    if (key === "method" || key === "dt" || key === "label") continue;
    if (!e.options.includes(key)) {
      const known = e.options.length ? `; it takes ${e.options.join(", ")}` : "; it takes no options";
      throw new SolverError("bad-input", `${ctx.field}.${key}: method "${e.name}" has no option "${key}"${known}`, `${ctx.field}.${key}`);
    }
  }
  return e.create(ctx);
}

registerMethod(SPLIT_EXPLICIT_METHOD);

for (const e of EXPONENTIAL_METHODS) registerMethod(e);
