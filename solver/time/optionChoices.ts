/**
 * What a user interface needs to offer the options of a registered method as pickers: for each option key its
 * kind, its choices with plain labels, its default and one line of help. Pure data, built from the method
 * registry, the φ-backend list and the split-explicit filters; the solver still does all the validating.
 */
import { phiBackends } from "../linalg/registry.js";
import { getMethod } from "./registry.js";
import { AVERAGING_FILTERS, MAX_PASSES, type AveragingFilter } from "./splitExplicit.js";

/** A value an option can take in a stepper spec; null = leave the key out (the method decides). */
export type OptionValue = string | number | null;

/** "This choice does not work while option `key` has one of `values`." */
export interface ChoiceConflict {
  readonly key: string;
  readonly values: readonly OptionValue[];
  readonly reason: string;
}

export interface OptionChoice {
  readonly value: OptionValue;
  readonly label: string;
  /** One line about this choice. */
  readonly help?: string;
  readonly conflicts?: readonly ChoiceConflict[];
}

export interface OptionDescription {
  readonly key: string;
  /** select: one of `choices`; number: a real number; integer: a whole number; json: a structured value (typed as JSON). */
  readonly kind: "select" | "number" | "integer" | "json";
  /** A short plain-words name for the field. */
  readonly label: string;
  /** One line of help. */
  readonly help: string;
  /** What the method uses when the key is left out (null: nothing fixed, e.g. chosen automatically). */
  readonly default: OptionValue;
  readonly choices?: readonly OptionChoice[];
  /** Bounds of number and integer inputs; `exclusive` marks bounds the value must not reach. */
  readonly min?: number;
  readonly max?: number;
  readonly exclusive?: boolean;
  /** Values that mean the same as leaving the key out (e.g. 0 sub-steps = automatic). */
  readonly sameAsOmitted?: readonly OptionValue[];
}

const ROSENBROCK_LINEAR = "jacobian";
/** Backends whose φ-actions need a skew operator with a purely imaginary spectrum. */
const SKEW_ONLY_BACKENDS = ["chebyshev", "rational"];
const FILTER_BACKENDS = ["chebyshev"];

function linearOption(nLayers: number, def: OptionValue, tableDecides: boolean): OptionDescription {
  const choices: OptionChoice[] = [];
  if (tableDecides) choices.push({ value: null, label: "as the table says", help: "rest, or jacobian when the table's linearPart is jacobian" });
  choices.push({ value: "rest", label: "rest: full rest-state linear operator", help: "all gravity waves and Coriolis of the state at rest, fixed for the run" });
  for (let k = 1; k <= nLayers; k++) {
    choices.push({
      value: `modes:${k}`,
      label: k === 1 ? "modes:1: barotropic only" : `modes:${k}: ${k} fastest vertical modes`,
      help: k === 1
        ? "only the fastest (depth-mean) wave is treated exactly, everything else as the nonlinear remainder"
        : `the rest-state operator restricted to the ${k} fastest of the ${nLayers} vertical modes`,
    });
  }
  choices.push({
    value: ROSENBROCK_LINEAR, label: "jacobian: re-formed each step",
    help: "the exact Jacobian at the start of every step (more work per step, keeps the order of Rosenbrock methods)",
    conflicts: [{ key: "backend", values: SKEW_ONLY_BACKENDS, reason: "chebyshev and rational need a skew operator, which the Jacobian is not" }],
  });
  return {
    key: "linear", kind: "select", label: "linear part", default: def, choices,
    help: "the part of the tendency the method integrates exactly; the remainder goes through the stages",
  };
}

function backendOption(): OptionDescription {
  return {
    key: "backend", kind: "select", label: "φ backend", default: "krylov",
    help: "how the actions of the matrix functions φ_k on vectors are computed",
    choices: phiBackends.map((b) => ({
      value: b.name, label: b.name, help: b.description,
      conflicts: SKEW_ONLY_BACKENDS.includes(b.name)
        ? [{ key: "linear", values: [ROSENBROCK_LINEAR], reason: "not available with linear: jacobian (its spectrum is not purely imaginary)" }]
        : undefined,
    })),
  };
}

function phiFilterOption(): OptionDescription {
  const needsChebyshev: ChoiceConflict = {
    key: "backend", values: phiBackends.map((b) => b.name).filter((n) => !FILTER_BACKENDS.includes(n)),
    reason: "the filter works with backend chebyshev only",
  };
  return {
    key: "filter", kind: "select", label: "high-frequency filter", default: "off",
    help: "damps frequencies near the spectral bound inside the φ-actions (strength 36 at the bound)",
    choices: [
      { value: "off", label: "off", help: "no damping" },
      { value: 8, label: "order 8", help: "gentler roll-off, damps a wider band below the bound", conflicts: [needsChebyshev] },
      { value: 16, label: "order 16", help: "sharper roll-off, damps only close to the bound", conflicts: [needsChebyshev] },
    ],
  };
}

const AVERAGING_HELP: Record<AveragingFilter, { label: string; help: string }> = {
  boxcar: { label: "boxcar", help: "plain average of the fast transport over the long step" },
  hann: { label: "hann (raised cosine)", help: "sub-cycle runs on to two long steps and averages with a raised cosine, damping fast waves the long step could alias" },
};

const PASS_HELP: readonly string[] = [
  "predictor only: first order",
  "predictor + centred corrector: second order",
  "three passes: damps inertial oscillations, amplifies internal waves slightly",
  "four passes: damps both, twice the cost of two",
];

function splitExplicitOptions(): OptionDescription[] {
  return [
    {
      key: "substeps", kind: "integer", label: "fast sub-steps", default: null, min: 0, sameAsOmitted: [0],
      help: "short steps of the free surface per long step; 0 or empty = automatic from the fast-wave limit",
    },
    {
      key: "filter", kind: "select", label: "averaging of the fast part", default: "boxcar",
      help: "how the sub-cycle's free surface and transport are averaged back onto the long step",
      choices: AVERAGING_FILTERS.map((f) => ({ value: f, label: AVERAGING_HELP[f].label, help: AVERAGING_HELP[f].help })),
    },
    {
      key: "passes", kind: "select", label: "passes", default: 2,
      help: "passes of the long step, each from the start state with a better-centred slow tendency",
      choices: Array.from({ length: MAX_PASSES }, (_, i) => ({ value: i + 1, label: `${i + 1}`, help: PASS_HELP[i] ?? `${i + 1} passes` })),
    },
  ];
}

function exponentialOption(key: string, nLayers: number, rosenbrock: boolean, custom: boolean): OptionDescription | undefined {
  switch (key) {
    case "linear": return linearOption(nLayers, custom ? null : rosenbrock ? ROSENBROCK_LINEAR : "rest", custom);
    case "backend": return backendOption();
    case "tolerance":
      return {
        key, kind: "number", label: "tolerance", default: 1e-8, min: 0, max: 1, exclusive: true,
        help: "relative error allowed in each φ-action, between 0 and 1 (e.g. 1e-8)",
      };
    case "substeps":
      return {
        key, kind: "integer", label: "φ sub-steps", default: null, min: 0, sameAsOmitted: [0],
        help: "time sub-steps inside each φ-action; 0 or empty = automatic",
      };
    case "filter": return phiFilterOption();
    default: return undefined;
  }
}

function structuredOption(key: string): OptionDescription {
  const known: Record<string, string> = {
    tableau: 'the Butcher tableau as { "a": [[], [a10], …], "b": [b0, …], "c": [c0, …], "order": p }',
    phiTable: 'the φ-coefficient table as { "c": [...], "a": [[], [[{"k":1,"coef":…,"at":…}]], …], "b": [...], "order": p }',
  };
  return { key, kind: "json", label: `${key} (JSON)`, default: null, help: known[key] ?? "method option, typed as a JSON value" };
}

/**
 * The options of method `methodName` for a scenario with `nLayers` layers, in the registry's order.
 * Throws the registry's field-named error for an unknown method.
 */
export function optionChoices(methodName: string, nLayers: number): OptionDescription[] {
  const m = getMethod(methodName);
  const layers = Math.max(1, Math.floor(nLayers));
  if (m.family === "split-explicit") {
    const byKey = new Map(splitExplicitOptions().map((o) => [o.key, o]));
    return m.options.map((k) => byKey.get(k) ?? structuredOption(k));
  }
  if (m.family === "exponential" || m.family === "exponential-rosenbrock") {
    const rosenbrock = m.family === "exponential-rosenbrock";
    const custom = m.options.includes("phiTable");
    return m.options.map((k) => exponentialOption(k, layers, rosenbrock, custom) ?? structuredOption(k));
  }
  return m.options.map(structuredOption);
}
