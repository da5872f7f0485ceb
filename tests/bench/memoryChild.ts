import { mkdtempSync, readFileSync, rmSync, statSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { main } from "../../solver/cli/main";
import { parseHeader } from "../../solver/io/netcdf";

/**
 * One long run in a fresh process, for the memory section of the benchmark: `tsx tests/bench/memoryChild.ts STEPS`
 * runs STEPS RK4 steps on a small periodic mesh with NetCDF output every 100 steps and prints one JSON line:
 * the process's peak resident set size (getrusage maxrss) and the file's size and record count.
 */
const steps = Number(process.argv[2]);
const dir = mkdtempSync(join(tmpdir(), "stepwell-mem-"));
const scenario = join(dir, "scenario.json");
const nc = join(dir, "out.nc");
(await import("node:fs")).writeFileSync(scenario, JSON.stringify({
  name: "memory-bench", mesh: { type: "periodic-hex", cellsX: 16, cellsY: 16, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 1500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0, bottomDrag: 1e-6 },
  initial: { type: "bump", amplitude: 1, radius: 60000 },
  stepper: { method: "rk4", dt: 60 }, duration: 6000, outputInterval: 6000,
}));
const rssBefore = process.memoryUsage().rss;
const t0 = performance.now();
const code = await main(["run", scenario, "--steps", String(steps), "--netcdf", nc, "--every", "6000", "--quiet"], () => {}, (s) => process.stderr.write(s + "\n"));
const seconds = (performance.now() - t0) / 1000;
const h = parseHeader(readFileSync(nc));
process.stdout.write(JSON.stringify({
  code, steps, seconds, rssBeforeMiB: rssBefore / 2 ** 20, peakRssMiB: process.resourceUsage().maxRSS / 1024,
  fileBytes: statSync(nc).size, records: h.numrecs, recordBytes: h.recordSize,
}) + "\n");
rmSync(dir, { recursive: true, force: true });
