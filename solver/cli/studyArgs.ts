import { readFileSync } from "node:fs";
import { dirname } from "node:path";
import { isCancellation, StudyInterrupted } from "../studies/common.js";
import { STOP_EXIT_CODES, type CliContext } from "./context.js";
import { writeJson, writeText } from "./io.js";
import { loadedModule } from "./modules.js";
import { SolverError } from "../errors.js";
import type { Scenario } from "../scenario/schema.js";
import type { StudyProgress } from "../studies/common.js";
import type { StepperConfig } from "../studies/stability.js";
import { stringOption, type ParsedArgs } from "./args.js";
import { terminal } from "./context.js";
import { fmt } from "./io.js";
import { resolvePathsInFile, userPath } from "./paths.js";
import { parseMethodList } from "../studies/methodList.js";

export { parseMethodList };

/**
 * `--steppers FILE`: a JSON array of stepper objects as in a scenario file (a `dt` there is ignored). FILE is
 * taken from where the user started; a relative `module` path inside it from FILE's own directory.
 */
export function readSteppersFile(arg: string): StepperConfig[] {
  let raw: unknown;
  const path = userPath(arg);
  try {
    raw = resolvePathsInFile(JSON.parse(readFileSync(path, "utf8")), path);
  } catch (e) {
    throw new SolverError("bad-input", `--steppers: cannot read ${path} as JSON (${(e as Error).message})`, "--steppers");
  }
  if (!Array.isArray(raw) || raw.length === 0) throw new SolverError("bad-input", "--steppers: the file must hold a non-empty JSON array of stepper objects", "--steppers");
  return raw.map((s, i) => {
    if (!s || typeof s !== "object" || Array.isArray(s)) throw new SolverError("bad-input", `--steppers[${i}]: must be an object like { "method": "rk4" }`, `--steppers[${i}]`);
    const o = { ...(s as Record<string, unknown>) };
    if (typeof o.module === "string") {
      const { key, definition } = loadedModule(o.module, `--steppers[${i}].module`, dirname(path));
      o.module = key;
      o.method = definition.name;
    }
    if (typeof o.method !== "string" || !o.method) throw new SolverError("bad-input", `--steppers[${i}].method: is required (a method name, or "module": a stepper module file)`, `--steppers[${i}].method`);
    if (o.label !== undefined && typeof o.label !== "string") throw new SolverError("bad-input", `--steppers[${i}].label: must be a string`, `--steppers[${i}].label`);
    delete o.dt;
    return o as StepperConfig;
  });
}

/** The steppers of a study: `--methods`/`--method` LIST or `--steppers FILE`, else the scenario's own (stability only). */
export function steppersFromArgs(args: ParsedArgs, s: Scenario | null, names: readonly string[]): StepperConfig[] {
  const given = names.filter((n) => args.options.has(n));
  const file = stringOption(args, "steppers");
  if (given.length > 1 || (given.length && file)) throw new SolverError("bad-input", `--${given[0]}: give either --${given[0]} or --steppers, not both`, `--${given[0]}`);
  if (file) return readSteppersFile(file);
  if (given.length) return parseMethodList(stringOption(args, given[0])!, `--${given[0]}`);
  if (!s) throw new SolverError("bad-input", `--${names[0]}: give the steppers with --${names[0]} LIST or --steppers FILE`, `--${names[0]}`);
  const { dt: _dt, ...rest } = s.stepper;
  return [rest as StepperConfig];
}

/** "d1,d2,…" → positive numbers, or one error naming the option. */
export function numberList(args: ParsedArgs, key: string): number[] | undefined {
  const v = args.options.get(key);
  if (v === undefined) return undefined;
  const msg = `--${key}: must be a comma-separated list of positive numbers`;
  if (v === true || v.trim() === "") throw new SolverError("bad-input", msg, `--${key}`);
  return v.split(",").map((p) => {
    const x = Number(p);
    if (p.trim() === "" || !Number.isFinite(x) || !(x > 0)) throw new SolverError("bad-input", `${msg}, got "${v}"`, `--${key}`);
    return x;
  });
}

/**
 * Progress on stderr: a redrawn bar on a terminal, otherwise a plain line now and then
 * (every 10% of the work or every minute).
 */
export function progressReporter(err: (s: string) => void, clock: () => number, what: string): (p: StudyProgress) => void {
  const tty = terminal.stderrIsTTY;
  const t0 = clock();
  let lastLine = t0;
  let lastTenth = 0;
  let lastDraw = -1;
  return (p) => {
    const now = clock();
    const elapsed = now - t0;
    const eta = p.fraction > 0.01 ? (elapsed * (1 - p.fraction)) / p.fraction : NaN;
    const text = `${what} ${p.done}/${p.total} ${p.unit ?? "runs"}, ${String(Math.round(p.fraction * 100)).padStart(3)}%, elapsed ${fmt(elapsed, "s", 3)}, ` +
      `left ~${Number.isFinite(eta) ? fmt(eta, "s", 2) : "?"} — ${p.item}`;
    if (tty) {
      if (now - lastDraw < 0.1 && p.fraction < 1) return;
      lastDraw = now;
      const width = 24;
      const full = Math.round(p.fraction * width);
      terminal.writeErr(`\r[${"#".repeat(full)}${".".repeat(width - full)}] ${text}`.slice(0, terminal.columns - 1).padEnd(Math.min(terminal.columns, 160) - 1));
      if (p.fraction >= 1) terminal.writeErr("\n");
      return;
    }
    const tenth = Math.floor(p.fraction * 10);
    if (tenth > lastTenth || now - lastLine > 60) {
      lastTenth = Math.max(tenth, lastTenth);
      lastLine = now;
      err(text);
    }
  };
}

/**
 * A study stopped by Ctrl-C, SIGTERM or closed output: print and write the rows that finished (marked
 * interrupted; a cut-short reference is not kept), say so in one line, and return the exit code. Rethrows anything
 * that is not a cancellation.
 */
export function reportInterrupted<Row>(e: unknown, ctx: CliContext, o: {
  command: string; json?: string; csv?: string; what: string;
  print: (rows: Row[]) => void; toCsv: (rows: Row[]) => string;
}, err: (s: string) => void): number {
  if (!isCancellation(e)) throw e;
  const stop = ctx.stopReason() ?? "SIGINT";
  const partial = e instanceof StudyInterrupted ? e.partial as { rows: Row[] } : undefined;
  if (partial) {
    o.print(partial.rows);
    if (o.json) writeJson(o.json, { ...partial, interruptedBy: stop });
    if (o.csv) writeText(o.csv, o.toCsv(partial.rows), "--csv");
  }
  const finished = e instanceof StudyInterrupted ? `with ${e.done} of ${e.total} runs finished` : `before ${o.what} finished`;
  err(`stepwell ${o.command}: interrupted (${stop}) ${finished}${o.json && partial ? `; ${o.json} holds those` : ""}`);
  return STOP_EXIT_CODES[stop];
}
