import type { ParsedArgs } from "./args.js";
import type { CliContext } from "./context.js";
import { MODES_USAGE, modesCommand } from "./modesCommand.js";
import { RUN_USAGE, runCommand } from "./runCommand.js";
import { SCENARIOS_USAGE, scenariosCommand } from "./scenariosCommand.js";
import { STABILITY_USAGE, stabilityCommand } from "./stabilityCommand.js";
import { SWEEP_USAGE, sweepCommand } from "./sweepCommand.js";
import { MERGE_USAGE, mergeCommand } from "./mergeCommand.js";
import { TEMPLATE_USAGE, templateCommand } from "./templateCommand.js";
import { ASSESS_USAGE, assessCommand } from "./assessCommand.js";
import { STATISTICS_USAGE, statisticsCommand } from "./statisticsCommand.js";
import { UNPACK_USAGE, unpackCommand } from "./unpackCommand.js";

export interface Command {
  readonly usage: string;
  readonly summary: string;
  /** Flags that take no value. */
  readonly flags?: readonly string[];
  /** false: the command loads no stepper modules first (it only writes or reads files). */
  readonly loadsModules?: boolean;
  run(args: ParsedArgs, out: (s: string) => void, err: (s: string) => void, ctx: CliContext): number | Promise<number>;
}

/** Every CLI command; a new command is one file plus one line here. */
export const COMMANDS: Record<string, Command> = {
  run: { usage: RUN_USAGE, summary: "run a scenario and report mass, energy, cost and stability", flags: ["quiet"], run: runCommand },
  modes: { usage: MODES_USAGE, summary: "vertical modes of the layer stack and the RK4 time-step limit", run: modesCommand },
  scenarios: { usage: SCENARIOS_USAGE, summary: "list the built-in scenarios", run: scenariosCommand },
  stability: { usage: STABILITY_USAGE, summary: "largest stable time step of each stepper (bracket by doubling, then bisect)", run: stabilityCommand },
  sweep: { usage: SWEEP_USAGE, summary: "convergence and work-precision sweep against a cached fine reference run", flags: ["reference-only", "no-cache"], run: sweepCommand },
  assess: { usage: ASSESS_USAGE, summary: "report card of one stepper: observed order, largest stable Δt, conservation and cost against RK4", run: assessCommand },
  template: { usage: TEMPLATE_USAGE, summary: "write a commented starter stepper module that `run --stepper-module` accepts", flags: ["force"], loadsModules: false, run: templateCommand },
  statistics: { usage: STATISTICS_USAGE, summary: "long-run statistics (time means, variability, energy budget) of each stepper against a reference ensemble's noise floor", flags: ["no-cache"], run: statisticsCommand },
  unpack: { usage: UNPACK_USAGE, summary: "write the stepper code a sandbox export carries (stepperCode) to a module file, beside a scenario that names it", flags: ["force"], loadsModules: false, run: unpackCommand },
  merge: { usage: MERGE_USAGE, summary: "join the partial results of a sharded stability, sweep or statistics run", run: mergeCommand },
};
