import { SolverError } from "../errors.js";
import { parseArgs } from "./args.js";
import { COMMANDS } from "./commands.js";
import { preloadModules } from "./modules.js";

function help(): string {
  const lines = ["Stepwell — usage: npm run --silent stepwell -- <command> [options]", ""];
  for (const [, c] of Object.entries(COMMANDS)) lines.push(`  ${c.usage}`, `      ${c.summary}`);
  lines.push("", "SCENARIO is a built-in name (see `scenarios`) or a path to a scenario JSON file.", "Exit codes: 0 success (an unstable run is a result), 2 bad input.");
  return lines.join("\n");
}

/** Entry point; returns the exit code. Bad input → one line on stderr and exit 2, never a stack trace. */
export async function main(
  argv: readonly string[],
  out: (s: string) => void = (s) => { process.stdout.write(s + "\n"); },
  err: (s: string) => void = (s) => { process.stderr.write(s + "\n"); },
): Promise<number> {
  const [name, ...rest] = argv;
  if (!name || name === "help" || name === "--help" || name === "-h") {
    out(help());
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
    await preloadModules(parsed);
    return await cmd.run(parsed, out, err);
  } catch (e) {
    if (e instanceof SolverError) {
      err(`stepwell ${name}: ${e.message}`);
      return 2;
    }
    err(`stepwell ${name}: internal error: ${(e as Error)?.message ?? String(e)}`);
    return 1;
  }
}

const isEntry = process.argv[1] && /cli[\\/]main\.(ts|js)$/.test(process.argv[1]);
if (isEntry) {
  main(process.argv.slice(2)).then((code) => { process.exitCode = code; });
}
