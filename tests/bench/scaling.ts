import { createRun } from "../../solver/driver/run";
import { cpuClock, round, time } from "./harness";
import type { BenchSection } from "./sections";

/**
 * How the cost of an RK4 step grows with the mesh: 4 sizes, least-squares exponent of ms vs cells. Timed by the
 * process's CPU time (the exponent is a ratio of figures taken minutes apart on a shared machine).
 */
export const scalingSection: BenchSection = {
  key: "scaling",
  run({ log, quick }) {
    const sizes = [32, 48, 64, 96];
    const msPerStep: number[] = [];
    const cells: number[] = [];
    log("Cost of one RK4 step against mesh size (3 layers, periodic; CPU time)");
    for (const n of sizes) {
      const run = createRun({
        name: "scaling", mesh: { type: "periodic-hex", cellsX: n, cellsY: n, spacing: 20000 },
        layers: [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.5 }, { thickness: 3000, density: 1027.5 }],
        physics: { f0: 1e-4 }, initial: { type: "bump", amplitude: 1, radius: 100000 }, stepper: { method: "rk4", dt: 60 }, duration: 3600,
      });
      const t = time(() => run.stepper.step(run.state, 0, 60), { warmup: 5, reps: quick ? 3 : 7, inner: Math.max(1, Math.round(40000 / (n * n))), clock: cpuClock });
      msPerStep.push(round(t.best));
      cells.push(run.mesh.nCells);
      log(`  ${String(n * n).padStart(6)} cells  ${t.best.toFixed(3)} ms per step (best), ${t.median.toFixed(3)} ms (median)`);
    }
    // slope of log(ms) against log(cells)
    const lx = cells.map(Math.log);
    const ly = msPerStep.map(Math.log);
    const mx = lx.reduce((a, b) => a + b) / lx.length;
    const my = ly.reduce((a, b) => a + b) / ly.length;
    let sxy = 0;
    let sxx = 0;
    lx.forEach((x, i) => { sxy += (x - mx) * (ly[i] - my); sxx += (x - mx) ** 2; });
    const exponent = round(sxy / sxx, 3);
    log(`  fitted exponent of cost against cell count: ${exponent} (linear = 1.0)`);
    return { sizes: cells, msPerStep, exponent };
  },
};
