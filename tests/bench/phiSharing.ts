import { createRun } from "../../solver/driver/run";
import { builtinScenario } from "../../solver/scenario/builtins";
import { exponentialRk, phiPlan, tableMaxPhi } from "../../solver/time/exponential";
import { EXP_TABLES } from "../../solver/time/expTables";
import { cpuClock, round, summary } from "./harness";
import type { BenchSection } from "./sections";

/**
 * One exponential step on the demo basin with its φ-actions shared across stages (one basis for every stage time of
 * one vector set) against the same table evaluated row by row (the engine before sharing). The two are timed
 * alternately, step by step, by this process's CPU time, from the same state (the basin after a day of wind).
 */
export const phiSharingSection: BenchSection = {
  key: "phiSharing",
  run({ log, quick }) {
    const run = createRun({ ...(builtinScenario("shelf-gyre-basin") as Record<string, unknown>), stepper: { method: "etdrk4", dt: 2000, linear: "modes:1" } });
    run.advance(43); // about a day: the wind has set up a circulation
    const x0 = Float64Array.from(run.state);
    const t0 = run.time;
    const dt = 2000;
    const reps = quick ? 5 : 15;
    const rows: { method: string; backend: string; share: boolean; phiActions: number; matvecs: number; msBest: number; msMedian: number }[] = [];
    log(`One step of Δt = ${dt} s on shelf-gyre-basin (linear modes:1, tolerance 1e-8), CPU time per step, ${reps} alternating repetitions`);
    log("method           backend     φ-actions  matvecs   ms best  ms median   (per row → shared)");
    for (const name of ["etdrk4", "etdrk4-krogstad"]) {
      const table = EXP_TABLES.find((t) => t.name === name)!;
      for (const backend of ["krylov", "chebyshev"]) {
        const counters = run.problem.counters;
        const steppers = [false, true].map((share) => {
          const part = run.problem.linear("modes:1");
          return exponentialRk(table, run.problem, part, part.phi({ backend, tolerance: 1e-8, maxPhi: tableMaxPhi(table) }), share);
        });
        const x = new Float64Array(x0.length);
        const times: number[][] = [[], []];
        const mv = [0, 0];
        for (let r = -1; r < reps; r++) {
          for (let s = 0; s < 2; s++) {
            x.set(x0);
            const m0 = counters.matvecs, c0 = cpuClock();
            steppers[s](x, t0, dt);
            const ms = cpuClock() - c0;
            mv[s] = counters.matvecs - m0;
            if (r >= 0) times[s].push(ms); // r = −1: warm-up
          }
        }
        const cells: string[] = [];
        for (let s = 0; s < 2; s++) {
          const t = summary(times[s]);
          const phiActions = phiPlan(table, s === 1).jobs.length;
          rows.push({ method: name, backend, share: s === 1, phiActions, matvecs: mv[s], msBest: round(t.best), msMedian: round(t.median) });
          cells.push(`${phiActions}  ${mv[s]}  ${t.best.toFixed(1)}  ${t.median.toFixed(1)}`);
        }
        log(`${name.padEnd(16)} ${backend.padEnd(10)}  ${cells.join("  →  ")}`);
      }
    }
    return rows;
  },
};
