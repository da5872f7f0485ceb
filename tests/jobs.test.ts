/**
 * `--jobs N`: a study (stability, sweep, assess, statistics) run in N worker threads gives exactly the result of one thread (all but wall-clock fields),
 * stops on request with what finished, and reports a failing worker as one line with exit 2.
 */
import { describe, expect, it } from "vitest";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { main } from "../solver/cli/main";
import type { CliContext } from "../solver/cli/context";

const dir = mkdtempSync(join(tmpdir(), "stepwell-jobs-"));
process.env.STEPWELL_CACHE_DIR = join(dir, "cache");

async function cli(argv: string[], ctx?: CliContext, onErr?: (s: string) => void): Promise<{ code: number; out: string; err: string }> {
  let out = "";
  let err = "";
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; onErr?.(s); }, ctx);
  return { code, out, err };
}

const readJson = (file: string) => JSON.parse(readFileSync(file, "utf8"));

/** A copy with the wall-clock fields removed: the only fields that may differ between runs. */
const WALL = new Set(["wallSeconds", "secondsPerSimDay", "rk4SecondsPerSimDay", "speedup"]);
function maskWall(v: unknown, key = ""): unknown {
  if (Array.isArray(v)) return v.map((x) => maskWall(x));
  if (v && typeof v === "object") {
    return Object.fromEntries(Object.entries(v as Record<string, unknown>)
      .filter(([k]) => !WALL.has(k) && !(key === "verdicts" && k === "cost")).map(([k, x]) => [k, maskWall(x, k)]));
  }
  return v;
}

// a small smooth case: 12 × 12 periodic hexagonal mesh, two layers, a Gaussian bump
const smooth = {
  name: "jobs-bump", mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 60 }, duration: 1200,
};
const scenario = join(dir, "bump.json");
writeFileSync(scenario, JSON.stringify(smooth));

describe("--jobs", () => {
  it("sweep: --jobs 2 gives the --jobs 1 result (rows in order, fits), wall times aside", async () => {
    const common = ["sweep", scenario, "--methods", "rk4,ssprk3", "--dt-factors", "0.4,0.2,0.1", "--duration", "1200"];
    const one = join(dir, "sweep1.json");
    const two = join(dir, "sweep2.json");
    const r1 = await cli([...common, "--jobs", "1", "--json", one]);
    expect(r1.code, r1.err).toBe(0);
    const r2 = await cli([...common, "--jobs", "2", "--json", two]);
    expect(r2.code, r2.err).toBe(0);
    const a = readJson(one);
    const b = readJson(two);
    expect(b.rows).toHaveLength(6);
    expect(maskWall(b)).toEqual(maskWall(a));
    // the study itself is sound: RK4 is fourth order (Kutta 1901; Butcher 2016, Numerical Methods for Ordinary
    // Differential Equations, 3rd ed., §23), SSPRK3 third order (Shu & Osher 1988, J. Comput. Phys. 77)
    expect(Math.abs(b.orders.rk4.order - 4)).toBeLessThan(0.3);
    expect(Math.abs(b.orders.ssprk3.order - 3)).toBeLessThan(0.3);
  }, 120_000);

  it("stability: --jobs 2 gives the --jobs 1 result exactly", async () => {
    const common = ["stability", scenario, "--method", "rk4,ssprk3", "--duration", "1200"];
    const one = join(dir, "stab1.json");
    const two = join(dir, "stab2.json");
    expect((await cli([...common, "--jobs", "1", "--json", one])).code).toBe(0);
    const r2 = await cli([...common, "--jobs", "2", "--json", two]);
    expect(r2.code, r2.err).toBe(0);
    const a = readJson(one);
    const b = readJson(two);
    expect(b).toEqual(a);
    // RK4 reaches the imaginary axis up to |z| = 2√2, SSPRK3 up to √3 (Gottlieb, Shu & Tadmor 2001, SIAM Review 43):
    // so the SSPRK3 limit is √3/(2√2) ≈ 0.61 of RK4's; a trial passes on bounded energy growth over a short run,
    // which lets a Δt a little above the linear bound through (0.67 here), hence the slack
    expect(b.map((r: { method: string }) => r.method)).toEqual(["rk4", "ssprk3"]);
    expect(Math.abs(b[1].maxStableDt / b[0].maxStableDt - Math.sqrt(3) / (2 * Math.SQRT2))).toBeLessThan(0.1);
  }, 120_000);

  it("assess: --jobs 2 gives the --jobs 1 report card, the cost figures (wall clock) aside", async () => {
    const common = ["assess", scenario, "--method", "ssprk3", "--duration", "600"];
    const one = join(dir, "assess1.json");
    const two = join(dir, "assess2.json");
    const r1 = await cli([...common, "--jobs", "1", "--json", one]);
    expect(r1.code, r1.err).toBe(0);
    const r2 = await cli([...common, "--jobs", "2", "--json", two]);
    expect(r2.code, r2.err).toBe(0);
    const a = readJson(one);
    const b = readJson(two);
    expect(maskWall(b)).toEqual(maskWall(a));
    expect(b.cost.secondsPerSimDay).toBeGreaterThan(0);
    // progress counts the report card's four parts (order, stability, conservation, RK4 cost), never "0/1 runs"
    for (const r of [r1, r2]) {
      const parts = [...r.err.matchAll(/assess (\d)\/(\d) parts/g)].map((m) => [Number(m[1]), Number(m[2])]);
      expect(parts.length, r.err).toBeGreaterThan(0);
      expect(parts.every(([, total]) => total === 4)).toBe(true);
      expect(Math.max(...parts.map(([done]) => done))).toBeGreaterThanOrEqual(2);
      expect(r.err).not.toMatch(/\d+\/\d+ runs/);
    }
    // SSPRK3 is third order (Shu & Osher 1988)
    expect(Math.abs(b.order.observed - 3)).toBeLessThan(0.3);
  }, 240_000);

  it("statistics: --jobs 2 (members, then rows, in workers) gives the --jobs 1 result and the same NetCDF, wall times aside", async () => {
    const common = ["statistics", scenario, "--methods", "rk4,ssprk3", "--dt-factors", "0.5,0.25", "--spin-up", "1200", "--window", "1200",
      "--sample-every", "300", "--ensemble", "3"];
    const file = (name: string) => join(dir, name);
    const saved = process.env.STEPWELL_CACHE_DIR;
    try {
      // each run with an empty cache of its own, so that both compute the ensemble members
      process.env.STEPWELL_CACHE_DIR = file("cache-stats-2");
      const r2 = await cli([...common, "--jobs", "2", "--json", file("stats2.json"), "--netcdf", file("stats2.nc")]);
      expect(r2.code, r2.err).toBe(0);
      // again with the members cached: only the rows run in workers
      const r2b = await cli([...common, "--jobs", "2", "--json", file("stats2b.json")]);
      expect(r2b.code, r2b.err).toBe(0);
      process.env.STEPWELL_CACHE_DIR = file("cache-stats-1");
      const r1 = await cli([...common, "--jobs", "1", "--json", file("stats1.json"), "--netcdf", file("stats1.nc")]);
      expect(r1.code, r1.err).toBe(0);
    } finally {
      process.env.STEPWELL_CACHE_DIR = saved;
    }
    const a = readJson(file("stats1.json"));
    const b = readJson(file("stats2.json"));
    expect(b.rows).toHaveLength(4);
    expect(b.reference.ensemble).toBe(3);
    expect(maskWall(b)).toEqual(maskWall(a));
    expect(maskWall(readJson(file("stats2b.json")))).toEqual(maskWall(a));
    expect(readFileSync(file("stats2.nc")).equals(readFileSync(file("stats1.nc")))).toBe(true);
    // the study itself is sound: the time-mean surface of RK4 converges at fourth order (Kutta 1901; Butcher 2016, §23)
    const [coarse, fine] = b.rows.filter((r: { method: string }) => r.method === "rk4");
    expect(Math.abs(Math.log(coarse.errors.meanSurface / fine.errors.meanSurface) / Math.log(coarse.dt / fine.dt) - 4)).toBeLessThan(0.4);
  }, 180_000);

  it("a stop request stops every worker; the rows that finished are written, each as --jobs 1 computed it", async () => {
    // runs long enough that a stop asked for after the first finished row always lands before the last one
    const common = ["sweep", scenario, "--methods", "rk4,ssprk3", "--dt-factors", "0.4,0.2,0.1,0.05", "--duration", "9600"];
    const full = join(dir, "stop-full.json");
    expect((await cli([...common, "--jobs", "1", "--json", full])).code).toBe(0);
    // ask to stop once the progress shows a row done (the reference counts 2 units: "3/10 runs"); the runs of
    // most steps go first, so most of the work is still to do
    let stop = false;
    const ctx: CliContext = { stopReason: () => (stop ? "SIGINT" : null) };
    const part = join(dir, "stop-part.json");
    const r = await cli([...common, "--jobs", "2", "--json", part], ctx, (line) => {
      const m = /sweep (\d+)\/(\d+) runs/.exec(line);
      if (m && Number(m[1]) >= 3) stop = true;
    });
    expect(r.code, r.err).toBe(130);
    expect(r.err).toMatch(/interrupted \(SIGINT\) with \d+ of 8 runs finished/);
    const p = readJson(part);
    expect(p.status).toBe("interrupted");
    expect(p.rows.length).toBeGreaterThanOrEqual(1);
    expect(p.rows.length).toBeLessThan(8);
    const f = readJson(full);
    p.items.forEach((k: number, j: number) => { expect(maskWall(p.rows[j])).toEqual(maskWall(f.rows[k])); });
  }, 120_000);

  it("bad --jobs, --jobs beside --shard, and a failing worker: one line naming the field, exit 2", async () => {
    const bad = await cli(["stability", scenario, "--method", "rk4", "--jobs", "65"]);
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/^stepwell stability: --jobs: must be a whole number from 1 to 64/);
    const zero = await cli(["sweep", scenario, "--methods", "rk4", "--dts", "60", "--jobs", "0"]);
    expect(zero.code).toBe(2);
    const sharded = await cli(["sweep", scenario, "--methods", "rk4", "--dts", "60", "--shard", "1/2", "--jobs", "2", "--json", join(dir, "s.json")]);
    expect(sharded.code).toBe(2);
    expect(sharded.err).toMatch(/--jobs: a --shard slice runs in one thread/);
    // a user stepper that throws on its third step: the worker's error is the one-thread error
    writeFileSync(join(dir, "fails.mjs"), `export default {
  name: "fails", order: 1, description: "forward Euler that throws on its third step",
  create(problem) {
    const F = problem.newVector(); let n = 0;
    return { step(x, t, dt) { if (++n > 2) throw new Error("deliberate failure"); problem.tendency(F, x, t); for (let i = 0; i < x.length; i++) x[i] += dt * F[i]; } };
  },
};\n`);
    writeFileSync(join(dir, "steppers.json"), JSON.stringify([{ module: "fails.mjs" }, { method: "rk4" }]));
    const args = ["stability", scenario, "--steppers", join(dir, "steppers.json"), "--duration", "600"];
    // progress lines may come first when the other worker reports before the failure (a loaded machine): the error is one line
    const errorLines = (s: string) => s.trim().split("\n").filter((l) => !/ runs, +\d+%, elapsed /.test(l));
    const w1 = await cli([...args, "--jobs", "1"]);
    const w2 = await cli([...args, "--jobs", "2"]);
    expect(w2.code).toBe(2);
    expect(errorLines(w2.err)).toHaveLength(1);
    expect(w2.err).toMatch(/deliberate failure/);
    expect(errorLines(w2.err)).toEqual(errorLines(w1.err));
  }, 120_000);
});
