import { SolverError } from "../errors.js";

/** A tiny argument parser: positional words and `--key value` / `--flag` options. */
export interface ParsedArgs {
  positional: string[];
  options: Map<string, string | true>;
  /** Every value of a repeatable option (e.g. `--option key=value --option …`). */
  multi: Map<string, string[]>;
}

/** Options that may be given more than once. */
export const REPEATABLE = ["option"];

export function parseArgs(argv: readonly string[], flags: readonly string[] = []): ParsedArgs {
  const positional: string[] = [];
  const options = new Map<string, string | true>();
  const multi = new Map<string, string[]>();
  const put = (key: string, v: string) => {
    options.set(key, v);
    if (REPEATABLE.includes(key)) multi.set(key, [...(multi.get(key) ?? []), v]);
  };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a.startsWith("--")) {
      const eq = a.indexOf("=");
      const key = eq > 0 ? a.slice(2, eq) : a.slice(2);
      if (eq > 0) put(key, a.slice(eq + 1));
      else if (flags.includes(key)) options.set(key, true);
      else {
        const v = argv[i + 1];
        if (v === undefined || (v.startsWith("--") && v.length > 2)) throw new SolverError("bad-input", `--${key}: needs a value`, `--${key}`);
        put(key, v);
        i++;
      }
    } else positional.push(a);
  }
  return { positional, options, multi };
}

export function rejectUnknown(args: ParsedArgs, known: readonly string[], command: string): void {
  for (const k of args.options.keys()) {
    if (!known.includes(k)) throw new SolverError("bad-input", `--${k}: unknown option for "${command}"; it takes ${known.map((o) => "--" + o).join(", ") || "no options"}`, `--${k}`);
  }
}

export function stringOption(args: ParsedArgs, key: string): string | undefined {
  const v = args.options.get(key);
  if (v === true) throw new SolverError("bad-input", `--${key}: needs a value`, `--${key}`);
  return v;
}

export function numberOption(args: ParsedArgs, key: string, opts: { positive?: boolean; integer?: boolean } = {}): number | undefined {
  const s = stringOption(args, key);
  if (s === undefined) return undefined;
  const v = Number(s);
  if (s.trim() === "" || !Number.isFinite(v)) throw new SolverError("bad-input", `--${key}: "${s}" is not a number`, `--${key}`);
  if (opts.positive && !(v > 0)) throw new SolverError("bad-input", `--${key}: must be > 0, got ${s}`, `--${key}`);
  if (opts.integer && !Number.isInteger(v)) throw new SolverError("bad-input", `--${key}: must be a whole number, got ${s}`, `--${key}`);
  return v;
}
