import { execFileSync } from "node:child_process";
import { join } from "node:path";
import { round } from "./harness";
import type { BenchSection } from "./sections";

/**
 * Memory of long runs: peak RSS of a fresh process after 10³ and 10⁵ RK4 steps on a small mesh with NetCDF
 * output every 100 steps (flat memory: the two peaks should be close), and the file size against
 * fixed part + records × record size (the file grows only with the output times written).
 */
export const memorySection: BenchSection = {
  key: "longRunMemory",
  run({ log }) {
    const rows: Record<string, unknown>[] = [];
    log("Memory of long runs (16×16 periodic mesh, 2 layers, RK4, NetCDF every 100 steps; each run in a fresh process)");
    for (const steps of [1e3, 1e5]) {
      const r = JSON.parse(execFileSync(process.execPath, ["--import", "tsx", join("tests", "bench", "memoryChild.ts"), String(steps)], { encoding: "utf8", timeout: 600000 }).trim().split("\n").at(-1)!) as {
        code: number; seconds: number; peakRssMiB: number; rssBeforeMiB: number; fileBytes: number; records: number; recordBytes: number;
      };
      const fixedBytes = r.fileBytes - r.records * r.recordBytes;
      log(`  ${String(steps).padStart(7)} steps: peak RSS ${r.peakRssMiB.toFixed(1)} MiB (RSS before the run ${r.rssBeforeMiB.toFixed(1)} MiB), ` +
        `${r.seconds.toFixed(1)} s; file ${r.fileBytes} bytes = ${fixedBytes} fixed + ${r.records} records × ${r.recordBytes} bytes`);
      rows.push({ steps, peakRssMiB: round(r.peakRssMiB), rssBeforeMiB: round(r.rssBeforeMiB), seconds: round(r.seconds), fileBytes: r.fileBytes, records: r.records, recordBytes: r.recordBytes, fixedBytes, exitCode: r.code });
    }
    return rows;
  },
};
