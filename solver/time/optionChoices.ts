/**
 * What a user interface needs to offer the options of a stepper as pickers, derived from the stepper's own
 * option declaration (interface.ts, `OptionSpec`): for each key its kind, its choices with plain labels, its
 * default and one line of help. The solver still does all the validating, from the same declaration.
 */
import type { OptionSpec, StepperDefinition } from "./interface.js";
import { choicesOf } from "./options.js";
import { getMethod } from "./registry.js";

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
  /** Unit of a number. */
  readonly unit?: string;
  /** Values that mean the same as leaving the key out (e.g. 0 sub-steps = automatic). */
  readonly sameAsOmitted?: readonly OptionValue[];
}

function describe(key: string, s: OptionSpec, nLayers: number): OptionDescription {
  const kind = s.type === "choice" ? "select" : s.type === "number" || s.type === "integer" ? s.type : "json";
  const def = s.default === undefined ? null : (s.default as OptionValue);
  const out: { -readonly [K in keyof OptionDescription]: OptionDescription[K] } = {
    key, kind, label: s.label ?? key, help: s.help, default: def,
  };
  if (kind === "select") {
    const cs: OptionChoice[] = choicesOf(s, { nLayers }).map((c) => ({ value: c.value, label: c.label ?? String(c.value), help: c.help, conflicts: c.conflicts }));
    if (s.default === undefined) cs.unshift({ value: null, label: "automatic", help: "the method decides" });
    out.choices = cs;
  }
  if (s.min !== undefined) out.min = s.min;
  if (s.max !== undefined) out.max = s.max;
  if (s.exclusive) out.exclusive = true;
  if (s.unit) out.unit = s.unit;
  if (s.sameAsOmitted) out.sameAsOmitted = s.sameAsOmitted;
  return out;
}

/** The options of a stepper definition for a scenario with `nLayers` layers, in declaration order. */
export function describeOptions(def: StepperDefinition, nLayers: number): OptionDescription[] {
  const layers = Math.max(1, Math.floor(nLayers));
  return Object.entries(def.options ?? {}).map(([k, s]) => describe(k, s, layers));
}

/**
 * The options of registered method `methodName`. Throws the registry's field-named error for an unknown method.
 */
export function optionChoices(methodName: string, nLayers: number): OptionDescription[] {
  return describeOptions(getMethod(methodName), nLayers);
}
