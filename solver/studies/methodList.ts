/**
 * The method-list syntax of the study commands and the sandbox's study page:
 * `rk4,exprb32(linear=modes:1;backend=krylov)` → stepper configs; `editor:NAME` names
 * the sandbox's code-panel stepper NAME. No I/O, so the browser's workers use it too.
 */
import { SolverError } from "../errors.js";
import { EDITOR_MODULE_PREFIX } from "../scenario/stepperCode.js";
import type { StepperConfig } from "./stability.js";

/** Split at commas that are not inside parentheses. */
function splitTop(text: string, field: string): string[] {
  const out: string[] = [];
  let depth = 0;
  let cur = "";
  for (const ch of text) {
    if (ch === "(") depth++;
    if (ch === ")") depth--;
    if (depth < 0) throw new SolverError("bad-input", `${field}: unbalanced ")" in "${text}"`, field);
    if (ch === "," && depth === 0) { out.push(cur); cur = ""; } else cur += ch;
  }
  if (depth !== 0) throw new SolverError("bad-input", `${field}: unbalanced "(" in "${text}"`, field);
  out.push(cur);
  return out;
}

function optionValue(v: string): unknown {
  const t = v.trim();
  if (t === "true") return true;
  if (t === "false") return false;
  if (t !== "" && Number.isFinite(Number(t))) return Number(t);
  if (t.startsWith("{") || t.startsWith("[")) { try { return JSON.parse(t); } catch { /* keep as text */ } }
  return t;
}

/** `rk4,exprb32(linear=modes:1;backend=krylov)` → stepper configs (method names are checked later by the study). */
export function parseMethodList(text: string, field: string): StepperConfig[] {
  if (text.trim() === "") throw new SolverError("bad-input", `${field}: must be a comma-separated list of methods, e.g. rk4,ssprk3`, field);
  return splitTop(text, field).map((entry, i) => {
    const m = /^\s*((?:editor:)?[A-Za-z0-9_.+-]+)\s*(?:\((.*)\))?\s*$/s.exec(entry);
    if (!m) throw new SolverError("bad-input", `${field}: entry ${i + 1} "${entry}" is not METHOD or METHOD(key=value;…)`, field);
    // "editor:<name>": the sandbox's code-panel stepper of that name (a user module loaded under that key)
    const spec: StepperConfig = m[1].startsWith(EDITOR_MODULE_PREFIX) ? { method: "user-module", module: m[1] } : { method: m[1] };
    if (m[2] !== undefined && m[2].trim() !== "") {
      for (const pair of m[2].split(";")) {
        const eq = pair.indexOf("=");
        if (eq <= 0) throw new SolverError("bad-input", `${field}: option "${pair}" of ${m[1]} is not key=value`, field);
        const key = pair.slice(0, eq).trim();
        if (key === "method" || key === "dt") throw new SolverError("bad-input", `${field}: "${key}" cannot be set as an option of ${m[1]}`, field);
        spec[key] = optionValue(pair.slice(eq + 1));
      }
    }
    return spec;
  });
}
