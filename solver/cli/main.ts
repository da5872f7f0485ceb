import { isMainThread } from "node:worker_threads";
import { SolverError } from "../errors.js";
import { parseArgs } from "./args.js";
import { COMMANDS } from "./commands.js";
import { preloadModules } from "./modules.js";
import type { Command } from "./commands.js";
import { NEVER_STOP, type CliContext } from "./context.js";

function help(commands: Record<string, Command>): string {
  const lines = ["Stepwell — usage: npx stepwell <command> [options]   (or: npm run --silent stepwell -- <command> [options])", ""];
  for (const [, c] of Object.entries(commands)) lines.push(`  ${c.usage}`, `      ${c.summary}`);
  lines.push("", "SCENARIO is a built-in name (see `scenarios`) or a path to a scenario JSON file; relative paths are taken from the directory you start in.",
    "Exit codes: 0 success (an unstable run is a result), 2 bad input, 130 stopped by Ctrl-C (SIGINT), 143 stopped by SIGTERM,",
    "141 output closed before the work finished; a stopped run or study still writes what finished, marked \"interrupted\".");
  return lines.join("\n");
}

/**
 * Run one command in this thread; returns the exit code. Bad input → one line on stderr and exit 2, never a stack
 * trace. `ctx` tells long commands when to stop (the process entry below wires it to signals).
 */
export async function main(
  argv: readonly string[],
  out: (s: string) => void = (s) => { process.stdout.write(s + "\n"); },
  err: (s: string) => void = (s) => { process.stderr.write(s + "\n"); },
  ctx: CliContext = NEVER_STOP,
): Promise<number> {
  // loaded here, not at the top, so that the process entry's main thread stays light (the work runs in a worker)
  const { COMMANDS } = await import("./commands.js");
  const [name, ...rest] = argv;
  if (!name || name === "help" || name === "--help" || name === "-h") {
    out(help(COMMANDS));
    return name ? 0 : 2;
  }
  const cmd = COMMANDS[name];
  if (!cmd) {
    err(`stepwell: unknown command "${name}"; commands: ${Object.keys(COMMANDS).join(", ")} (try --help)`);
    return 2;
  }
  try {
    if (rest.includes("--help")) { out(`usage: ${cmd.usage}\n  ${cmd.summary}`); return 0; }
    const parsed = parseArgs(rest, cmd.flags ?? []);
    if (cmd.loadsModules !== false) await preloadModules(parsed);
    return await cmd.run(parsed, out, err, ctx);
  } catch (e) {
    if (e instanceof SolverError) {
      err(`stepwell ${name}: ${e.message}`);
      return 2;
    }
    err(`stepwell ${name}: internal error: ${(e as Error)?.message ?? String(e)}`);
    return 1;
  }
}

/** The process entry (`tsx solver/cli/main.ts …`, `npx stepwell …`): signals, closed pipes and exit codes. */
export async function cliEntry(argv: readonly string[]): Promise<void> {
  const { launch } = await import("./process.js");
  launch(argv);
}

const isEntry = isMainThread && process.argv[1] && /cli[\\/]main\.(ts|js)$/.test(process.argv[1]);
if (isEntry) void cliEntry(process.argv.slice(2));
