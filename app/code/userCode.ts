/**
 * The user's stepper code as the page keeps it: in local storage per stepper name, in share links and exported
 * scenario files (under the top-level key `stepperCode`, which the page removes before the solver sees the
 * scenario), and the spec that names a module loaded from it.
 */
import type { StepperSpec } from "../../workers/protocol.js";

export { asStepperCode, declaredName, isEditorModule, MAX_SOURCE_CHARS, moduleKey, type StepperCode } from "../../solver/scenario/stepperCode.js";
import { asStepperCode, isEditorModule, type StepperCode } from "../../solver/scenario/stepperCode.js";

const STORE_PREFIX = "stepwell.code.";
const LAST_KEY = "stepwell.code.last";

export function saveCode(code: StepperCode): void {
  try {
    localStorage.setItem(STORE_PREFIX + code.name, JSON.stringify(code));
    localStorage.setItem(LAST_KEY, code.name);
  } catch { /* storage full or blocked: the code stays in the editor */ }
}

export function loadCode(name: string): StepperCode | null {
  try {
    const raw = localStorage.getItem(STORE_PREFIX + name);
    return raw ? asStepperCode(JSON.parse(raw)) : null;
  } catch {
    return null;
  }
}

export function lastCode(): StepperCode | null {
  try {
    const name = localStorage.getItem(LAST_KEY);
    return name ? loadCode(name) : null;
  } catch {
    return null;
  }
}

/**
 * A scenario object from a link or a file → the scenario the solver may load (no `stepperCode` key, and a
 * built-in stepper in place of an editor module, which is not loaded yet) and the code it carried.
 */
export function splitScenarioCode(raw: unknown): { scenario: unknown; code: StepperCode | null; spec: StepperSpec | null } {
  if (!raw || typeof raw !== "object" || Array.isArray(raw)) return { scenario: raw, code: null, spec: null };
  const { stepperCode, ...rest } = raw as Record<string, unknown>;
  const code = stepperCode === undefined ? null : asStepperCode(stepperCode);
  const stepper = rest.stepper as StepperSpec | undefined;
  if (stepper && isEditorModule(stepper)) {
    const { module: _m, method: _x, ...options } = stepper as StepperSpec & Record<string, unknown>;
    // until the user consents, the run holds RK4 at the link's Δt (nothing of the code runs)
    return { scenario: { ...rest, stepper: { method: "rk4", dt: options.dt } }, code, spec: stepper };
  }
  return { scenario: rest, code, spec: null };
}

/** The scenario with the code attached (share links, exported files). */
export function withCode(scenario: unknown, code: StepperCode | null): unknown {
  if (!code || !scenario || typeof scenario !== "object") return scenario;
  return { ...(scenario as object), stepperCode: code };
}
