/**
 * The one place where stepper options are checked: every stepper (built-in or user module) declares its
 * options once (`OptionSpec`), and validation, CLI flags and the sandbox's pickers all read that declaration.
 */
import { SolverError } from "../errors.js";
import type { OptionChoice, OptionContext, OptionDeclarations, OptionSpec, StepperDefinition } from "./interface.js";

/** Keys of a stepper spec that are not method options. */
export const RESERVED_STEPPER_KEYS = ["method", "dt", "label", "module"] as const;

/** The choices of an option as objects, for a context. */
export function choicesOf(spec: OptionSpec, ctx: OptionContext): OptionChoice[] {
  const raw = typeof spec.choices === "function" ? spec.choices(ctx) : spec.choices ?? [];
  return raw.map((c) => (typeof c === "object" ? c : { value: c }));
}

const fmt = (v: unknown) => JSON.stringify(v);

function bounded(key: string, spec: OptionSpec, v: number, field: string): void {
  const unit = spec.unit ? ` ${spec.unit}` : "";
  if (spec.min !== undefined && (spec.exclusive ? v <= spec.min : v < spec.min)) {
    throw new SolverError("bad-input", `${field} must be ${spec.exclusive ? ">" : "≥"} ${spec.min}${unit}, got ${v}`, field);
  }
  if (spec.max !== undefined && (spec.exclusive ? v >= spec.max : v > spec.max)) {
    throw new SolverError("bad-input", `${field} must be ${spec.exclusive ? "<" : "≤"} ${spec.max}${unit} (the declared limit of ${key}), got ${v}`, field);
  }
}

/** Check one value against its declaration; returns the value to use. */
export function checkOption(key: string, spec: OptionSpec, value: unknown, ctx: OptionContext, field: string): unknown {
  if (spec.sameAsOmitted?.includes(value as string | number)) return undefined;
  switch (spec.type) {
    case "number":
    case "integer": {
      const what = spec.type === "integer" ? `a whole number${spec.min !== undefined ? ` ≥ ${spec.min}` : ""}` : `a finite number${spec.unit ? ` [${spec.unit}]` : ""}`;
      if (typeof value !== "number" || !Number.isFinite(value) || (spec.type === "integer" && !Number.isInteger(value))) {
        throw new SolverError("bad-input", `${field} must be ${what}, got ${fmt(value)}`, field);
      }
      bounded(key, spec, value, field);
      break;
    }
    case "choice": {
      const choices = choicesOf(spec, ctx);
      if (!spec.parse && !choices.some((c) => c.value === value)) {
        throw new SolverError("bad-input", `${field}: unknown value ${fmt(value)}; expected one of ${choices.map((c) => fmt(c.value)).join(", ")}`, field);
      }
      break;
    }
    case "string":
      if (typeof value !== "string") throw new SolverError("bad-input", `${field} must be a string, got ${fmt(value)}`, field);
      break;
    case "boolean":
      if (typeof value !== "boolean") throw new SolverError("bad-input", `${field} must be true or false, got ${fmt(value)}`, field);
      break;
    case "json":
      break;
  }
  return spec.parse ? spec.parse(value, field, ctx) : value;
}

/**
 * Validate the options of a stepper spec against a definition: unknown keys are refused (naming
 * `<field>.<key>`), declared defaults are filled in, each value is checked. Returns the options to pass to
 * `create` (without method, dt, label, module).
 */
export function validateOptions(def: StepperDefinition, spec: Record<string, unknown>, ctx: OptionContext, field = "stepper"): Record<string, unknown> {
  const decl: OptionDeclarations = def.options ?? {};
  const out: Record<string, unknown> = {};
  for (const key of Object.keys(spec)) {
    if ((RESERVED_STEPPER_KEYS as readonly string[]).includes(key)) continue;
    if (!(key in decl)) {
      const keys = Object.keys(decl);
      const known = keys.length ? `; it takes ${keys.join(", ")}` : "; it takes no options";
      throw new SolverError("bad-input", `${field}.${key}: method "${def.name}" has no option "${key}"${known}`, `${field}.${key}`);
    }
  }
  for (const [key, s] of Object.entries(decl)) {
    const raw = spec[key];
    const f = `${field}.${key}`;
    const v = raw === undefined || raw === null ? undefined : checkOption(key, s, raw, ctx, f);
    const value = v === undefined ? s.default : v;
    if (value !== undefined) out[key] = value;
  }
  return out;
}

/** Turn a command-line string into the value an option declares (numbers for numeric options, JSON for json). */
export function coerceOptionText(spec: OptionSpec | undefined, text: string): unknown {
  const t = text.trim();
  const num = Number(t);
  const isNum = t !== "" && Number.isFinite(num);
  if (!spec) return isNum ? num : t;
  switch (spec.type) {
    case "number":
    case "integer":
      return isNum ? num : t;
    case "boolean":
      return t === "true" ? true : t === "false" ? false : t;
    case "string":
      return text;
    case "choice": {
      const choices = typeof spec.choices === "function" ? [] : spec.choices ?? [];
      const numeric = choices.some((c) => typeof (typeof c === "object" ? c.value : c) === "number");
      if (spec.parse && /^[[{]/.test(t)) {
        try { return JSON.parse(t); } catch { return t; } // a structured value the declaration's parse accepts
      }
      return isNum && (numeric || spec.parse) ? num : t;
    }
    case "json":
      if (isNum) return num;
      if (/^[[{"]/.test(t) || t === "true" || t === "false" || t === "null") {
        try { return JSON.parse(t); } catch { return t; }
      }
      return t;
  }
}

/** The shape a user module must have, checked before anything of it runs. */
export function checkDefinition(value: unknown, where: string): StepperDefinition {
  const bad = (msg: string) => new SolverError("bad-input", `${where}: ${msg}`, where);
  if (!value || typeof value !== "object") throw bad("the default export must be a stepper definition object { name, order, description, create }");
  const d = value as Record<string, unknown>;
  if (typeof d.name !== "string" || !/^[a-z][a-z0-9-]*$/.test(d.name)) throw bad(`"name" must be lower-case letters, digits and hyphens, starting with a letter; got ${fmt(d.name)}`);
  if (typeof d.order !== "number" || !Number.isFinite(d.order) || d.order <= 0) throw bad(`"order" must be the declared order of accuracy, a number > 0; got ${fmt(d.order)}`);
  if (d.description !== undefined && typeof d.description !== "string") throw bad(`"description" must be a string`);
  if (typeof d.create !== "function") throw bad(`"create" must be a function create(problem, options) returning { step(x, t, dt) }`);
  if (d.options !== undefined) {
    if (!d.options || typeof d.options !== "object" || Array.isArray(d.options)) throw bad(`"options" must be an object key → { type, default, min, max, choices, help }`);
    for (const [key, s] of Object.entries(d.options as Record<string, unknown>)) {
      const o = s as Record<string, unknown>;
      if (!o || typeof o !== "object") throw bad(`options.${key} must be an object { type, default, min, max, choices, help }`);
      if (!["number", "integer", "choice", "string", "boolean", "json"].includes(o.type as string)) throw bad(`options.${key}.type must be number, integer, choice, string, boolean or json; got ${fmt(o.type)}`);
      if ((RESERVED_STEPPER_KEYS as readonly string[]).includes(key)) throw bad(`options.${key}: "${key}" is reserved`);
    }
  }
  return { description: "", ...(d as object) } as StepperDefinition;
}

/** Parse "rest" | "modes:N" | "jacobian" (field-named errors). */
export function parseLinearName(s: unknown, nLayers: number, field = "stepper.linear"): { kind: "rest" | "jacobian" } | { kind: "modes"; modes: number } {
  if (s === "rest" || s === "jacobian") return { kind: s };
  if (typeof s === "string") {
    const mt = /^modes:(\d+)$/.exec(s.trim());
    if (mt) {
      const k = Number(mt[1]);
      if (k < 1) throw new SolverError("bad-input", `${field}: modes:${k} must keep at least 1 mode`, field);
      if (k > nLayers) throw new SolverError("bad-input", `${field}: modes:${k} asks for more modes than the ${nLayers} layer${nLayers === 1 ? "" : "s"}`, field);
      return { kind: "modes", modes: k };
    }
  }
  throw new SolverError("bad-input", `${field}: unknown linear part ${JSON.stringify(s)}; expected "rest", "modes:N" (1 ≤ N ≤ ${nLayers}) or "jacobian"`, field);
}
