/**
 * Stepper definitions from user modules, by the key a spec names them with (`"stepper": { "module": key }`).
 * Loading a module is I/O and happens outside the solver (the CLI imports the file, the sandbox compiles the
 * editor's code); the loader registers the checked definition here, and every stepper spec that names the
 * key — in a run, a study or a shard — is built from it exactly like a built-in.
 */
import { SolverError } from "../errors.js";
import type { StepperDefinition } from "./interface.js";
import { checkDefinition } from "./options.js";

interface Loaded { readonly definition: StepperDefinition; readonly origin: string }

const table = new Map<string, Loaded>();

/** Register a loaded module's default export under `key` (its resolved path or an editor id); checks its shape. */
export function registerModule(key: string, exported: unknown, origin = key): StepperDefinition {
  const definition = checkDefinition(exported, `stepper module ${origin}`);
  table.set(key, { definition, origin });
  return definition;
}

/** The definition registered under `key`; a clear error when it was never loaded. */
export function moduleDefinition(key: string, field = "stepper.module"): Loaded {
  const m = table.get(key);
  if (!m) {
    const hint = key.startsWith("editor:") ? " (it names a stepper of the sandbox's code panel: in the page, write or open it there first; on the command line, give its module file instead)" : "";
    throw new SolverError("bad-input", `${field}: stepper module "${key}" is not loaded${hint}`, field);
  }
  return m;
}

export function forgetModule(key: string): void {
  table.delete(key);
}
