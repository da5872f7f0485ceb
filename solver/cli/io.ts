import { closeSync, fsyncSync, mkdirSync, openSync, readFileSync, renameSync, rmSync, writeFileSync } from "node:fs";
import { randomBytes } from "node:crypto";
import { basename, dirname, join } from "node:path";
import { SolverError } from "../errors.js";
import { builtinScenario, BUILTIN_SCENARIOS } from "../scenario/builtins.js";
import { resolvePathsInFile, userPath } from "./paths.js";

/** A scenario argument: a built-in name or a path to a JSON file. Returns the raw (unvalidated) object. */
export function loadScenarioArg(arg: string | undefined): unknown {
  if (!arg) throw new SolverError("bad-input", `SCENARIO: missing; give a file or one of: ${BUILTIN_SCENARIOS.map((b) => b.name).join(", ")}`, "SCENARIO");
  const b = builtinScenario(arg);
  if (b) return b;
  const path = userPath(arg);
  let text: string;
  try {
    text = readFileSync(path, "utf8");
  } catch {
    const where = path === arg ? "" : ` (looked for ${path})`;
    throw new SolverError("bad-input", `SCENARIO: "${arg}" is neither a built-in scenario (${BUILTIN_SCENARIOS.map((s) => s.name).join(", ")}) nor a readable file${where}`, "SCENARIO");
  }
  try {
    return resolvePathsInFile(JSON.parse(text), path);
  } catch (e) {
    throw new SolverError("bad-input", `SCENARIO: ${arg} is not valid JSON (${(e as Error).message})`, "SCENARIO");
  }
}

/**
 * Every file the tool writes goes through here: the content is written to a temporary name in the same directory
 * (hidden, ending in .tmp, so globs such as parts/*.json never see it), flushed to disk, and renamed over the
 * target. A rename within one directory is atomic (POSIX rename(2)), so a reader — a later `merge`, another
 * shard job sharing a cache — sees the old file or the new one, never a truncated one; an interrupted or
 * failed write leaves at most the temporary file, which is removed when the failure is seen.
 */
export function writeFileAtomic(path: string, data: string | Uint8Array): void {
  const dir = dirname(path);
  mkdirSync(dir, { recursive: true });
  const tmp = join(dir, `.${basename(path)}.${process.pid}-${randomBytes(4).toString("hex")}.tmp`);
  try {
    const fd = openSync(tmp, "w");
    try {
      writeFileSync(fd, data);
      fsyncSync(fd);
    } finally {
      closeSync(fd);
    }
    renameSync(tmp, path);
  } catch (e) {
    rmSync(tmp, { force: true });
    throw e;
  }
}

/** JSON text as the tool writes it: two-space indents, non-finite numbers as null. */
export function jsonText(value: unknown): string {
  return JSON.stringify(value, (_k, v) => (typeof v === "number" && !Number.isFinite(v) ? null : v), 2) + "\n";
}

/** Write a result file named on the command line (resolved from where the user started). */
export function writeJson(path: string, value: unknown, option = "--json"): void {
  writeText(path, jsonText(value), option);
}

export function writeText(path: string, text: string, option: string): void {
  const target = userPath(path);
  try {
    writeFileAtomic(target, text);
  } catch (e) {
    throw new SolverError("bad-input", `${option}: cannot write ${target} (${(e as Error).message})`, option);
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

/** "1 step", "3 steps", "1 day", "0.5 days": a count with its noun, plural unless the count is exactly 1. */
export function count(n: number, noun: string, digits = 4): string {
  const text = Number.isInteger(n) ? String(n) : fmt(n, "", digits);
  return `${text} ${n === 1 ? noun : noun + "s"}`;
}

/** A plain text table with aligned columns. */
export function table(header: string[], rows: string[][]): string {
  const w = header.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] ?? "").length)));
  const line = (r: string[]) => r.map((c, i) => c.padEnd(w[i])).join("  ").trimEnd();
  return [line(header), w.map((n) => "─".repeat(n)).join("  "), ...rows.map(line)].join("\n");
}
