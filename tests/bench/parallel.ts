import { availableParallelism } from "node:os";
import { Worker } from "node:worker_threads";
import { round } from "./harness";
import type { BenchSection } from "./sections";

/**
 * What a parallel tendency could gain on this machine, measured without writing one: the same tendency loop on a
 * mesh of ≥ 50k cells runs in 1, 2, … worker threads at once, each on its own copy of the problem, with no
 * synchronisation at all. The aggregate throughput of k threads over that of one is an upper bound for the
 * speed-up of a shared-memory tendency split k ways (which adds barriers and halo traffic on top). The decision
 * whether `--threads` pays is taken from this figure.
 */
const CHILD = `
const { parentPort, workerData } = require("node:worker_threads");
(async () => {
  (await import(workerData.tsxApi)).register();
  const { createRun } = await import(workerData.runModule);
  const run = createRun(workerData.scenario);
  const out = new Float64Array(run.model.n);
  for (let i = 0; i < 3; i++) run.model.tendency(out, run.state, 0);
  parentPort.postMessage("ready");
  parentPort.once("message", () => {
    const t0 = performance.now();
    for (let i = 0; i < workerData.evaluations; i++) run.model.tendency(out, run.state, 0);
    parentPort.postMessage(performance.now() - t0);
  });
})();
`;

function scenario(n: number) {
  return {
    name: "parallel", mesh: { type: "periodic-hex", cellsX: n, cellsY: n, spacing: 20000 },
    layers: [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.5 }, { thickness: 3000, density: 1027.5 }],
    physics: { f0: 1e-4 }, initial: { type: "bump", amplitude: 1, radius: 100000 }, stepper: { method: "rk4", dt: 60 }, duration: 3600,
  };
}

/** Wall milliseconds until all of `threads` workers have done `evaluations` tendencies each (started together). */
async function trial(threads: number, evaluations: number, n: number): Promise<number> {
  const data = { tsxApi: import.meta.resolve("tsx/esm/api"), runModule: new URL("../../solver/driver/run.ts", import.meta.url).href, scenario: scenario(n), evaluations };
  const workers = Array.from({ length: threads }, () => new Worker(CHILD, { eval: true, workerData: data }));
  try {
    await Promise.all(workers.map((w) => new Promise((ok, fail) => { w.once("message", ok); w.once("error", fail); })));
    const t0 = performance.now();
    await Promise.all(workers.map((w) => new Promise((ok, fail) => { w.once("message", ok); w.once("error", fail); w.postMessage("go"); })));
    return performance.now() - t0;
  } finally {
    await Promise.all(workers.map((w) => w.terminate()));
  }
}

export const parallelSection: BenchSection = {
  key: "parallelCapacity",
  async run({ log, quick }) {
    const n = 224; // 50,176 cells
    const evaluations = quick ? 20 : 60;
    const cores = availableParallelism();
    const counts = [...new Set([1, 2, cores])].filter((k) => k <= Math.max(2, cores));
    const rounds = quick ? 2 : 3;
    log(`Parallel capacity: ${n}×${n} = ${n * n} cells × 3 layers, ${evaluations} tendencies per thread, threads started together,`);
    log(`no sharing between them (an upper bound for a shared-memory tendency); ${cores} cores reported; best / median of ${rounds} rounds`);
    const perThreadCount: Record<string, unknown> = {};
    const throughput: Record<number, number> = {};
    const ms: Record<number, number[]> = {};
    for (let r = 0; r < rounds; r++) for (const k of counts) (ms[k] ??= []).push(await trial(k, evaluations, n));
    for (const k of counts) {
      const s = [...ms[k]].sort((a, b) => a - b);
      const best = s[0], median = s[Math.floor(s.length / 2)];
      throughput[k] = (k * evaluations) / best;
      const bound = throughput[k] / throughput[counts[0]];
      perThreadCount[k] = { wallMs: { best: round(best), median: round(median) }, tendenciesPerSecond: round(1000 * throughput[k]), speedupBound: round(bound, 3) };
      log(`  ${k} thread${k > 1 ? "s" : " "}: ${best.toFixed(0).padStart(6)} / ${median.toFixed(0).padEnd(6)} ms wall, ${(1000 * throughput[k]).toFixed(1)} tendencies/s in all, ` +
        `speed-up bound ${bound.toFixed(2)}×`);
    }
    return { cells: n * n, cores, evaluations, threads: perThreadCount };
  },
};
