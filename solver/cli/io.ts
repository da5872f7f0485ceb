import { readFileSync, writeFileSync, mkdirSync } from "node:fs";
import { dirname } from "node:path";
import { SolverError } from "../errors.js";
import { builtinScenario, BUILTIN_SCENARIOS } from "../scenario/builtins.js";

/** A scenario argument: a built-in name or a path to a JSON file. Returns the raw (unvalidated) object. */
export function loadScenarioArg(arg: string | undefined): unknown {
  if (!arg) throw new SolverError("bad-input", `SCENARIO: missing; give a file or one of: ${BUILTIN_SCENARIOS.map((b) => b.name).join(", ")}`, "SCENARIO");
  const b = builtinScenario(arg);
  if (b) return b;
  let text: string;
  try {
    text = readFileSync(arg, "utf8");
  } catch {
    throw new SolverError("bad-input", `SCENARIO: "${arg}" is neither a built-in scenario (${BUILTIN_SCENARIOS.map((s) => s.name).join(", ")}) nor a readable file`, "SCENARIO");
  }
  try {
    return JSON.parse(text);
  } catch (e) {
    throw new SolverError("bad-input", `SCENARIO: ${arg} is not valid JSON (${(e as Error).message})`, "SCENARIO");
  }
}

export function writeJson(path: string, value: unknown): void {
  try {
    mkdirSync(dirname(path), { recursive: true });
    writeFileSync(path, JSON.stringify(value, (_k, v) => (typeof v === "number" && !Number.isFinite(v) ? null : v), 2) + "\n");
  } catch (e) {
    throw new SolverError("bad-input", `--json: cannot write ${path} (${(e as Error).message})`, "--json");
  }
}

export function writeText(path: string, text: string, option: string): void {
  try {
    mkdirSync(dirname(path), { recursive: true });
    writeFileSync(path, text);
  } catch (e) {
    throw new SolverError("bad-input", `${option}: cannot write ${path} (${(e as Error).message})`, option);
  }
}

/** Engineering formatting with a unit: 1.23e-4 s, 198.2 m/s. */
export function fmt(v: number, unit = "", digits = 4): string {
  if (v === null || v === undefined || Number.isNaN(v)) return "n/a";
  if (!Number.isFinite(v)) return v > 0 ? "∞" : "−∞";
  const a = Math.abs(v);
  const s = a !== 0 && (a < 1e-3 || a >= 1e6) ? v.toExponential(digits - 1) : Number(v.toPrecision(digits)).toString();
  return unit ? `${s} ${unit}` : s;
}

/** A plain text table with aligned columns. */
export function table(header: string[], rows: string[][]): string {
  const w = header.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] ?? "").length)));
  const line = (r: string[]) => r.map((c, i) => c.padEnd(w[i])).join("  ").trimEnd();
  return [line(header), w.map((n) => "─".repeat(n)).join("  "), ...rows.map(line)].join("\n");
}
