import { describe, expect, it } from "vitest";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { main } from "../solver/cli/main";
import { seededRandom } from "../solver/mesh/hexLattice";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";
import { fitOrder, MemoryReferenceCache, parseShard, runSweep, shardItems, stabilityStudy, type ReferenceRecord, type StepperConfig } from "../solver/studies";
import { listMethods } from "../solver/time/registry";

const dir = mkdtempSync(join(tmpdir(), "stepwell-studies-"));
process.env.STEPWELL_CACHE_DIR = join(dir, "cache");

/** Run the CLI in-process and capture what it prints. */
async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = "";
  let err = "";
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; });
  return { code, out, err };
}

/** A copy of a study result with every wallSeconds removed (wall time is the one thing that differs run to run). */
function maskWall(v: unknown): unknown {
  if (Array.isArray(v)) return v.map(maskWall);
  if (v && typeof v === "object") {
    return Object.fromEntries(Object.entries(v as Record<string, unknown>).filter(([k]) => k !== "wallSeconds").map(([k, x]) => [k, maskWall(x)]));
  }
  return v;
}

const g = 9.81;
const H = 1000;
const d = 20000;
const cellsX = 12; // a multiple of 3, so the K (three-colouring) mode exists on the periodic rectangle
const cellsY = 12;

/**
 * Largest eigenvalue of the TRiSK Laplacian −DG over the wave vectors this periodic rectangle resolves, from the
 * regular-hexagon symbol λ(k) = 4/(3d²) Σ_j (1 − cos θ_j), θ_j = k·a_j, a_j the three nearest-neighbour vectors at
 * 120° (Thuburn et al. 2009). Periods: L_x = n_x d, L_y = n_y (√3/2) d.
 */
function laplacianMax(nx: number, ny: number, spacing: number): number {
  let best = 0;
  for (let p = 0; p < nx; p++) {
    for (let q = 0; q < ny; q++) {
      const kx = (2 * Math.PI * p) / (nx * spacing);
      const ky = (2 * Math.PI * q) / ((ny * Math.sqrt(3) * spacing) / 2);
      const t1 = kx * spacing;
      const t2 = kx * spacing * 0.5 + (ky * spacing * Math.sqrt(3)) / 2;
      const t3 = -t1 - t2;
      const lam = (4 / (3 * spacing * spacing)) * (3 - Math.cos(t1) - Math.cos(t2) - Math.cos(t3));
      best = Math.max(best, lam);
    }
  }
  return best;
}

function restingHex() {
  const s = parseScenario({
    name: "resting-hex", mesh: { type: "periodic-hex", cellsX, cellsY, spacing: d },
    layers: [{ thickness: H, density: 1025 }], physics: { gravity: g, f0: 0, beta: 0 },
    initial: { type: "rest" }, stepper: { method: "rk4", dt: 100 }, duration: 1e6,
  });
  const built = buildScenario(s);
  // small random thickness perturbations (1 mm on 1000 m: linear regime) excite every mode, the K mode included
  const rnd = seededRandom(11);
  for (let i = 0; i < built.mesh.nCells; i++) built.initial[i] += 1e-3 * (rnd() - 0.5);
  return built;
}

/** A smooth two-layer problem: a wide surface bump (3 cells in radius) on a rotating periodic 12×12 mesh. */
const smooth = {
  name: "smooth-bump", mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 60 }, duration: 3000,
};
const smoothFile = join(dir, "smooth.json");
writeFileSync(smoothFile, JSON.stringify(smooth));

describe("stability limit search", () => {
  it("recovers the RK4 and SSPRK3 limits on a resting periodic hexagonal mesh, f = 0", () => {
    // Source: Thuburn et al. 2009 — λ_max = 6/d² at the K point of the hexagonal lattice; the lattice scan
    // below recomputes it from the symbol, so ω_max = √(gH λ_max) = √6 √(gH)/d.
    const lamMax = laplacianMax(cellsX, cellsY, d);
    expect(lamMax * d * d).toBeCloseTo(6, 10);
    const wMax = Math.sqrt(g * H * lamMax);
    // Source: RK4 stability region reaches the imaginary axis up to |z| = 2√2, SSPRK3 (any 3-stage order-3 RK)
    // up to √3 (Gottlieb, Shu & Tadmor 2001, SIAM Review 43; Hairer & Wanner 1996, Solving ODEs II, §IV.2).
    const rk4 = (2 * Math.SQRT2) / wMax;
    const ssp = Math.sqrt(3) / wMax;
    const built = restingHex();
    // start well below the limit so that the doubling really brackets it; a few hundred steps per trial
    const [r4] = stabilityStudy(built, [{ method: "rk4" }], { duration: 300 * rk4, tolerance: 0.005, perturbation: 0, startDt: 0.3 * rk4 });
    expect(r4.bracketed).toBe(true);
    expect(Math.abs(r4.maxStableDt / rk4 - 1)).toBeLessThan(0.02);
    expect(r4.trials[0].dt).toBeCloseTo(0.3 * rk4, 9);
    expect(r4.trials.some((t) => t.outcome === "unstable" && t.dt < 1.02 * rk4)).toBe(true);
    const [r3] = stabilityStudy(built, [{ method: "ssprk3" }], { duration: 300 * rk4, tolerance: 0.005, perturbation: 0, startDt: 0.3 * ssp });
    expect(Math.abs(r3.maxStableDt / ssp - 1)).toBeLessThan(0.02);
    // ratio to the scenario's RK4 limit: √3/(2√2) = 0.612 for SSPRK3 (same sources)
    expect(r3.ratioToRk4).toBeCloseTo(Math.sqrt(3) / (2 * Math.SQRT2), 1);
    for (const t of [...r4.trials, ...r3.trials]) expect(t.reason.length).toBeGreaterThan(10);
  });
});

describe("convergence sweep", () => {
  it("fits orders within 0.3 of nominal for rk4 and ssprk3 on a smooth scenario", () => {
    // Source: classical RK4 is order 4 (Kutta 1901); SSPRK3 order 3 (Shu & Osher 1988, J. Comput. Phys. 77, 439–471).
    const built = buildScenario(parseScenario(smooth));
    const r = runSweep(built, { steppers: [{ method: "rk4" }, { method: "ssprk3" }], dtFactors: [0.4, 0.2, 0.1, 0.05], duration: 3000 }, { cache: new MemoryReferenceCache() });
    expect(r.rows).toHaveLength(8);
    expect(Math.abs(r.orders.rk4.order! - 4)).toBeLessThan(0.3);
    expect(Math.abs(r.orders.ssprk3.order! - 3)).toBeLessThan(0.3);
    expect(r.orders.rk4.points).toBeGreaterThanOrEqual(3);
    expect(r.orders.ssprk3.points).toBeGreaterThanOrEqual(3);
    // the RK4 reference is well below every row's error (the fits did not run into its floor)
    expect(r.rows.every((row) => !row.atReferenceFloor)).toBe(true);
    // layer volumes are conserved by the flux form (common practice, no source): drift at round-off
    expect(Math.max(...r.rows.map((row) => row.massDrift))).toBeLessThan(1e-12);
  });

  const exponential = listMethods().filter((m) => (m.family === "exponential" || m.family === "exponential-rosenbrock") && !m.name.startsWith("custom-"));
  it.skipIf(exponential.length === 0)("fits orders within 0.3 of nominal for the registered exponential methods", () => {
    // Nominal orders from the registry: exponential Euler 1, ETD2RK 2, ETDRK4 / Krogstad 4 (Cox & Matthews 2002,
    // J. Comput. Phys. 176; Krogstad 2005, J. Comput. Phys. 203), exprb2/32/43 2/3/4 (Hochbruck, Ostermann &
    // Schweitzer 2009, SIAM J. Numer. Anal. 47). The Rosenbrock ones keep their order only with the Jacobian as the
    // linear part (Hochbruck & Ostermann 2010, Acta Numerica 19; measured with this code). Their linear part is
    // exact, so Δt goes beyond the RK4 limit; a tight φ tolerance and a fine reference keep the floor low.
    const steppers: StepperConfig[] = exponential.map((m) => {
      const spec: StepperConfig = { method: m.name };
      if (m.options && "linear" in m.options) spec.linear = m.family === "exponential-rosenbrock" ? "jacobian" : "rest";
      if (m.options && "tolerance" in m.options) spec.tolerance = 1e-12;
      return spec;
    });
    const built = buildScenario(parseScenario(smooth));
    const r = runSweep(built, { steppers, dtFactors: [1.6, 0.8, 0.4, 0.2], duration: 1500, referenceDt: 0.5 }, { cache: new MemoryReferenceCache() });
    steppers.forEach((s, i) => {
      const o = Object.values(r.orders)[i];
      expect(o.order, s.method).not.toBeNull();
      expect(Math.abs(o.order! - exponential[i].order), `${s.method}: fitted ${o.order} on ${o.range}`).toBeLessThan(0.3);
    });
  });

  it("picks the asymptotic range: drops a pre-asymptotic row and rows at the error floor", () => {
    // Synthetic e = Δt² with a saturated largest Δt and a floor at the smallest two (common practice, no source)
    const pts = [
      { dt: 1, error: 1e-6 }, { dt: 2, error: 1.02e-6 }, { dt: 4, error: 16e-6 }, { dt: 8, error: 64e-6 },
      { dt: 16, error: 256e-6 }, { dt: 32, error: 1024e-6 }, { dt: 64, error: 1500e-6 },
    ];
    const f = fitOrder(pts);
    expect(f.order).toBeCloseTo(2, 10);
    expect(f.range).toEqual([4, 32]);
  });

  it("reuses a cached reference run (content hash of scenario and reference stepper)", () => {
    const built = buildScenario(parseScenario(smooth));
    const inner = new MemoryReferenceCache();
    let sets = 0;
    const cache = { get: (k: string) => inner.get(k), set: (k: string, r: ReferenceRecord) => { sets++; inner.set(k, r); } };
    const def = { steppers: [{ method: "rk4" }], dtFactors: [0.4, 0.2], duration: 1200 };
    const a = runSweep(built, def, { cache });
    const b = runSweep(buildScenario(parseScenario({ ...smooth, name: "renamed" })), def, { cache });
    expect(sets).toBe(1);
    expect(maskWall(b.rows)).toEqual(maskWall(a.rows));
    // a different initial state is a different reference
    runSweep(buildScenario(parseScenario({ ...smooth, initial: { type: "bump", amplitude: 2, radius: 60000 } })), def, { cache });
    expect(sets).toBe(2);
  });
});

describe("sharding", () => {
  it("slices cover every item once (round robin)", () => {
    const all = [1, 2, 3].flatMap((i) => shardItems(10, { index: i, count: 3 }));
    expect(all.sort((a, b) => a - b)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    expect(parseShard("2/3")).toEqual({ index: 2, count: 3 });
  });

  it("merge of a 3-way sharded sweep equals the unsharded sweep row for row (wallSeconds masked)", async () => {
    const common = ["sweep", smoothFile, "--methods", "rk4,ssprk3", "--dt-factors", "0.4,0.2,0.1", "--duration", "1200"];
    const full = join(dir, "full.json");
    expect((await cli(...common, "--json", full)).code).toBe(0);
    const parts: string[] = [];
    for (let i = 1; i <= 3; i++) {
      const p = join(dir, `part${i}.json`);
      const r = await cli(...common, "--shard", `${i}/3`, "--json", p);
      expect(r.code, r.err).toBe(0);
      parts.push(p);
      expect(JSON.parse(readFileSync(p, "utf8")).rows).toHaveLength(2);
    }
    const merged = join(dir, "merged.json");
    const m = await cli("merge", parts[2], parts[0], parts[1], "--json", merged);
    expect(m.code, m.err).toBe(0);
    const a = JSON.parse(readFileSync(full, "utf8"));
    const b = JSON.parse(readFileSync(merged, "utf8"));
    expect(b.rows.map((r: { label: string; dt: number }) => `${r.label}@${r.dt}`)).toEqual(a.rows.map((r: { label: string; dt: number }) => `${r.label}@${r.dt}`));
    expect(maskWall(b)).toEqual(maskWall(a));
    expect(Object.keys(a.orders)).toEqual(["rk4", "ssprk3"]);
    for (const k of ["label", "method", "dt", "status", "error", "massDrift", "energyDrift", "wallSeconds", "rhsEvaluations", "matvecs"]) expect(a.rows[0]).toHaveProperty(k);
    // a missing slice is refused
    const bad = await cli("merge", parts[0], parts[1], "--json", join(dir, "bad.json"));
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/^stepwell merge: PARTS: missing slice 3\/3\n$/);
  });

  it("merge of a 2-way sharded stability study equals the unsharded one", async () => {
    const common = ["stability", smoothFile, "--method", "rk4,ssprk3", "--duration", "3000", "--tolerance", "0.05"];
    const full = join(dir, "st-full.json");
    expect((await cli(...common, "--json", full)).code).toBe(0);
    const p1 = join(dir, "st1.json");
    const p2 = join(dir, "st2.json");
    expect((await cli(...common, "--shard", "1/2", "--json", p1)).code).toBe(0);
    expect((await cli(...common, "--shard", "2/2", "--json", p2)).code).toBe(0);
    const merged = join(dir, "st-merged.json");
    expect((await cli("merge", p1, p2, "--json", merged)).code).toBe(0);
    const a = JSON.parse(readFileSync(full, "utf8"));
    expect(JSON.parse(readFileSync(merged, "utf8"))).toEqual(a);
    expect(a.map((r: { method: string }) => r.method)).toEqual(["rk4", "ssprk3"]);
    for (const k of ["method", "maxStableDt", "ratioToRk4", "trials"]) expect(a[0]).toHaveProperty(k);
  });
});

describe("bad study arguments", () => {
  const cases: [string, string[], RegExp][] = [
    ["unknown method (stability)", ["stability", smoothFile, "--method", "nosuch"], /--method(\[\d\])?(\.method)?: unknown method "nosuch"/],
    ["unknown method (sweep)", ["sweep", smoothFile, "--methods", "rk4,nosuch", "--dts", "10"], /--methods\[1\]\.method: unknown method "nosuch"/],
    ["empty Δt list", ["sweep", smoothFile, "--methods", "rk4", "--dts="], /--dts: must be a comma-separated list of positive numbers/],
    ["non-positive Δt", ["sweep", smoothFile, "--methods", "rk4", "--dts", "10,-5"], /--dts: must be a comma-separated list of positive numbers/],
    ["zero Δt factor", ["sweep", smoothFile, "--methods", "rk4", "--dt-factors", "0.5,0"], /--dt-factors: must be a comma-separated list of positive numbers/],
    ["tolerance 0 (stability)", ["stability", smoothFile, "--tolerance", "0"], /--tolerance: must be > 0/],
    ["tolerance < 0 (sweep)", ["sweep", smoothFile, "--methods", "rk4", "--dts", "10", "--tolerance", "-1"], /--tolerance: /],
    ["shard out of range", ["sweep", smoothFile, "--methods", "rk4", "--dts", "10", "--shard", "4/3", "--json", join(dir, "x.json")], /--shard: must be i\/n/],
    ["shard not i/n", ["stability", smoothFile, "--shard", "two", "--json", join(dir, "y.json")], /--shard: must be i\/n/],
    ["shard 0", ["stability", smoothFile, "--shard", "0/2", "--json", join(dir, "z.json")], /--shard: must be i\/n/],
    ["no Δt at all", ["sweep", smoothFile, "--methods", "rk4"], /--dts: /],
  ];
  for (const [what, argv, re] of cases) {
    it(`${what}: exit 2 with one line naming the argument`, async () => {
      const r = await cli(...argv);
      expect(r.code).toBe(2);
      expect(r.err).toMatch(re);
      expect(r.err.trim().split("\n")).toHaveLength(1);
      expect(r.err).not.toMatch(/at .*\.ts:\d+/);
    });
  }
});
