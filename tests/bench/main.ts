import { writeFileSync } from "node:fs";
import { createRun } from "../../solver/driver/run";
import { round, time } from "./harness";
import { EXTRA_SECTIONS } from "./sections";

/**
 * `npm run bench [-- --json FILE] [-- --quick]`: tendency cost per cell·layer and RK4 step time on periodic
 * hexagonal meshes with 3 layers, plus the sections registered in sections.ts.
 */
const argv = process.argv.slice(2);
const jsonIdx = argv.indexOf("--json");
const jsonFile = jsonIdx >= 0 ? argv[jsonIdx + 1] : undefined;
if (jsonIdx >= 0 && !jsonFile) {
  process.stderr.write("bench: --json needs a file name\n");
  process.exit(2);
}
const quick = argv.includes("--quick");
const log = (s: string) => process.stdout.write(s + "\n");

export function benchScenario(n: number) {
  return {
    name: `bench-${n}`,
    mesh: { type: "periodic-hex", cellsX: n, cellsY: n, spacing: 20000 },
    layers: [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.5 }, { thickness: 3000, density: 1027.5 }],
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
    initial: { type: "bump", amplitude: 1, radius: 100000 },
    stepper: { method: "rk4", dt: 60 },
    duration: 3600,
  };
}

const result: Record<string, unknown> = { machine: { cores: (await import("node:os")).cpus().length, node: process.version } };
const tendency: Record<string, unknown> = {};
const rk4Step: Record<string, unknown> = {};
log("Tendency evaluation and RK4 step, 3 layers, periodic hexagonal mesh (best and median of repeated runs)");
log("mesh       cells    ns per cell·layer (best / median)   RK4 step ms (best / median)");
for (const n of [64, 128]) {
  const run = createRun(benchScenario(n));
  const out = new Float64Array(run.model.n);
  const cellLayers = run.mesh.nCells * 3;
  const t = time(() => run.model.tendency(out, run.state, 0), { warmup: 20, reps: quick ? 5 : 15, inner: n === 64 ? 20 : 5 });
  const s = time(() => run.stepper.step(run.state, 0, 60), { warmup: 3, reps: quick ? 3 : 9, inner: n === 64 ? 5 : 2 });
  const key = `${n}x${n}`;
  tendency[key] = { nsPerCellLayer: { best: round((t.best * 1e6) / cellLayers), median: round((t.median * 1e6) / cellLayers) } };
  rk4Step[key] = { ms: { best: round(s.best), median: round(s.median) } };
  log(`${key.padEnd(10)} ${String(run.mesh.nCells).padEnd(8)} ${((t.best * 1e6) / cellLayers).toFixed(1).padStart(8)} / ${((t.median * 1e6) / cellLayers).toFixed(1).padEnd(22)}` +
    `${s.best.toFixed(2).padStart(8)} / ${s.median.toFixed(2)}`);
}
result.tendency = tendency;
result.rk4Step = rk4Step;

for (const section of EXTRA_SECTIONS) {
  log("");
  try {
    result[section.key] = await section.run({ log, quick });
  } catch (e) {
    log(`(section ${section.key} failed: ${(e as Error).message})`);
    result[section.key] = { error: (e as Error).message };
  }
}

if (jsonFile) {
  writeFileSync(jsonFile, JSON.stringify(result, null, 2) + "\n");
  log(`\nwrote ${jsonFile}`);
}
