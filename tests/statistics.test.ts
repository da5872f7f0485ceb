import { describe, expect, it } from "vitest";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join, resolve } from "node:path";
import { std } from "mathjs";
import { NetCDFReader } from "netcdfjs";
import { main } from "../solver/cli/main";
import { surfaceHeight } from "../solver/diagnostics/fields";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";
import { LIMITS } from "../solver/scenario/limits";
import { layerMass } from "../solver/diagnostics/budget";
import { decodeState, encodeState } from "../solver/io/stateFile";
import { Run } from "../solver/driver/run";
import { existsSync, readdirSync } from "node:fs";
import { builtinScenario } from "../solver/scenario/builtins";
import { MemoryReferenceCache } from "../solver/studies/reference";
import {
  defaultSampleInterval, memberInitialState, noiseFloor, planStatistics, restStatistics, runStatistics, StatisticsAccumulator, statisticErrors,
  STATISTICS, type StatisticFields, type WindowEnergy,
} from "../solver/studies/statistics";

const dir = mkdtempSync(join(tmpdir(), "stepwell-statistics-"));
process.env.STEPWELL_CACHE_DIR = join(dir, "cache");

async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = "";
  let err = "";
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; });
  return { code, out, err };
}

/** A copy of a result with every wallSeconds removed (wall time is the one thing that differs run to run). */
function maskWall(v: unknown): unknown {
  if (Array.isArray(v)) return v.map(maskWall);
  if (v && typeof v === "object") {
    return Object.fromEntries(Object.entries(v as Record<string, unknown>).filter(([k]) => k !== "wallSeconds").map(([k, x]) => [k, maskWall(x)]));
  }
  return v;
}

/** A small forced, damped two-layer periodic ocean with a jittered mesh (cell areas differ), stirred by a bump. */
const tiny = {
  name: "tiny-forced",
  mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000, jitter: 0.08, seed: 3 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 1500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0, wind: { type: "zonal-cosine", amplitude: 0.2 }, bottomDrag: 1e-6, viscosity: 100 },
  initial: { type: "bump", amplitude: 2, radius: 50000, interface: 1 },
  stepper: { method: "rk4", dt: 60 },
  duration: 3600,
};
const tinyFile = join(dir, "tiny.json");
writeFileSync(tinyFile, JSON.stringify(tiny));
const built = buildScenario(parseScenario(tiny));
const nc = built.mesh.nCells;

function field(f: (i: number, k: number) => number, layers = 1): Float64Array {
  const a = new Float64Array(layers * nc);
  for (let k = 0; k < layers; k++) for (let i = 0; i < nc; i++) a[k * nc + i] = f(i, k);
  return a;
}

describe("error of a statistic (area-weighted L2 norm, relative to the reference's departure from rest)", () => {
  // The area-weighted discrete L2 norm ‖a‖² = Σ A_i a_i² and its use for relative errors: common practice, no source.
  const area = built.mesh.cellArea;
  const totalArea = area.reduce((s, a) => s + a, 0);
  const rest = restStatistics(built.model);
  const restThickness = [500, 1500];

  it("the jittered mesh has unequal cell areas (so the weighting is tested)", () => {
    expect(Math.max(...area) / Math.min(...area)).toBeGreaterThan(1.05);
  });

  it("a field differing by a known amount on one cell gives sqrt(A_j) d / (c sqrt(ΣA))", () => {
    const c = 0.5; // reference: mean surface 0.5 m above rest everywhere, std 0.2 m, thickness c_k above rest, KE 0.01
    const ref: StatisticFields = {
      meanSurface: field((i) => rest.meanSurface[i] + c), surfaceStd: field(() => 0.2),
      meanThickness: field((i, k) => restThickness[k] + (k === 0 ? 3 : 1), 2), meanKineticEnergy: field(() => 0.01, 2),
    };
    const j = 5;
    const dEta = 0.01;
    const s: StatisticFields = {
      meanSurface: ref.meanSurface.map((v, i) => (i === j ? v + dEta : v)),
      surfaceStd: ref.surfaceStd.map((v) => v * 1.1),
      meanThickness: ref.meanThickness.map((v, q) => (q === nc + j ? v - 2 : v)),
      meanKineticEnergy: ref.meanKineticEnergy.map((v, q) => (q < nc ? v + 0.001 : v)),
    };
    const e = statisticErrors(built.model, s, ref, rest);
    expect(e.errors.meanSurface).toBeCloseTo((Math.sqrt(area[j]) * dEta) / (c * Math.sqrt(totalArea)), 12);
    expect(e.errors.surfaceStd).toBeCloseTo(0.1, 12); // a uniform 10% change
    // thickness: 2 m on one cell of layer 1 against departures 3 m (layer 0) and 1 m (layer 1) everywhere
    expect(e.errors.meanThickness).toBeCloseTo((2 * Math.sqrt(area[j])) / Math.sqrt(10 * totalArea), 12);
    expect(e.byLayer.meanThickness[0]).toBe(0);
    expect(e.byLayer.meanThickness[1]).toBeCloseTo((2 * Math.sqrt(area[j])) / Math.sqrt(totalArea), 12);
    // KE: +0.001 on every cell of layer 0 against 0.01 in both layers: 0.001 / (0.01 √2)
    expect(e.errors.meanKineticEnergy).toBeCloseTo(0.001 / (0.01 * Math.SQRT2), 12);
    // an unweighted norm would give another number on this mesh
    expect(Math.abs(e.errors.meanSurface - dEta / (c * Math.sqrt(nc)))).toBeGreaterThan(1e-4 * e.errors.meanSurface);
    // identical fields: zero error
    expect(Object.values(statisticErrors(built.model, ref, ref, rest).errors)).toEqual([0, 0, 0, 0]);
  });

  it("the accumulated mean and standard deviation agree with mathjs (population std, Welford's update)", () => {
    const acc = new StatisticsAccumulator(built.model);
    const samples: Float64Array[] = [];
    for (let j = 0; j < 7; j++) {
      const x = Float64Array.from(built.initial);
      for (let i = 0; i < nc; i++) x[i] += 0.3 * Math.sin(j + 0.1 * i) + 1e-3 * j; // upper layer thickness moves the surface
      samples.push(x);
      acc.add(x);
    }
    const f = acc.finish();
    const eta = new Float64Array(nc);
    for (const i of [0, 17, nc - 1]) {
      const series = samples.map((x) => { surfaceHeight(eta, built.model, x); return eta[i]; });
      expect(f.meanSurface[i]).toBeCloseTo(series.reduce((a, b) => a + b, 0) / series.length, 12);
      // mathjs std with normalization "uncorrected" divides by n (mathjs 15 documentation, std)
      expect(f.surfaceStd[i]).toBeCloseTo(Number(std(series, "uncorrected")), 12);
      expect(f.meanThickness[i]).toBeCloseTo(samples.reduce((a, x) => a + x[i], 0) / samples.length, 10);
    }
  });

  it("the default sample interval divides spin-up and window with at least 20 samples", () => {
    expect(defaultSampleInterval(20 * 86400, 30 * 86400)).toBe(86400);
    expect(defaultSampleInterval(86400, 10 * 86400)).toBe(43200);
    expect(defaultSampleInterval(5400, 7200)).toBe(60);
    expect(defaultSampleInterval(7, 7200)).toBeNull();
  });
});

describe("noise floor from a round-off ensemble", () => {
  it("members are reproducible and differ from the scenario's state only at round-off", () => {
    const L = 2;
    const a = memberInitialState(built.initial, L * nc, 1, 1e-14, 1);
    const b = memberInitialState(built.initial, L * nc, 1, 1e-14, 1);
    const c = memberInitialState(built.initial, L * nc, 2, 1e-14, 1);
    expect(a).toEqual(b);
    expect(memberInitialState(built.initial, L * nc, 0, 1e-14, 1)).toEqual(built.initial);
    let worst = 0;
    let differ = 0;
    for (let q = 0; q < L * nc; q++) {
      worst = Math.max(worst, Math.abs(a[q] - built.initial[q]) / built.initial[q]);
      if (a[q] !== c[q]) differ++;
    }
    expect(worst).toBeGreaterThan(0);
    expect(worst).toBeLessThan(1.01e-14); // ε plus the rounding of the product
    expect(differ).toBeGreaterThan(nc);
  });

  it("ensemble of 3: a tiny floor; the reference stepper itself is within it, a large Δt is not", () => {
    // Ensembles of runs from slightly different initial states measure what is unpredictable (Leith 1974,
    // "Theoretical skill of Monte Carlo forecasts", Mon. Wea. Rev. 102, 409–418); on this short, smooth run the
    // members stay within round-off of each other, so the floor is tiny and any truncation error stands above it.
    const cache = new MemoryReferenceCache();
    const r = runStatistics(built, {
      steppers: [{ method: "rk4" }], dts: [30, 120], spinUp: 1200, window: 2400, sampleEvery: 600, referenceDt: 30, ensemble: 3,
    }, { cache });
    expect(r.reference.ensemble).toBe(3);
    expect(r.reference.keys).toHaveLength(3);
    expect(new Set(r.reference.keys).size).toBe(3);
    for (const s of ["meanSurface", "surfaceStd", "meanThickness", "meanKineticEnergy"] as const) {
      expect(r.noiseFloor[s]!).toBeGreaterThan(0);
      expect(r.noiseFloor[s]!).toBeLessThan(1e-6);
      expect(r.noiseFloorRms[s]!).toBeLessThanOrEqual(r.noiseFloor[s]!);
    }
    const [same, coarse] = r.rows;
    expect(same.dt).toBe(30);
    expect(same.status).toBe("completed");
    // the same stepper and Δt as the unperturbed member: identical statistics
    for (const s of STATISTICS) expect(same.errors[s]).toBe(0);
    expect(Object.values(same.withinNoise).every((v) => v === true)).toBe(true);
    expect(coarse.status).toBe("completed");
    for (const s of ["meanSurface", "surfaceStd", "meanKineticEnergy"] as const) {
      expect(coarse.errors[s]!).toBeGreaterThan(10 * r.noiseFloor[s]!);
      expect(coarse.withinNoise[s]).toBe(false);
    }
    // the members are cached: a second study runs no reference again and gives the same floor
    const again = runStatistics(built, { steppers: [{ method: "ssprk3" }], dts: [60], spinUp: 1200, window: 2400, sampleEvery: 600, referenceDt: 30, ensemble: 3 }, { cache });
    expect(again.noiseFloor).toEqual(r.noiseFloor);
    expect(again.reference.keys).toEqual(r.reference.keys);
  });

  it("the floor is the largest pairwise difference, normalised by member 0", () => {
    const rest = restStatistics(built.model);
    const energy: WindowEnergy = { meanEnergy: 10, meanWindPower: 2, meanDragLoss: 1, meanViscousLoss: 0.5, meanResidual: 0 };
    const member = (dEta: number, dE: number) => ({
      fields: { meanSurface: field((i) => rest.meanSurface[i] + 1 + dEta), surfaceStd: field(() => 1), meanThickness: Float64Array.from(rest.meanThickness), meanKineticEnergy: field(() => 1, 2) },
      energy: { ...energy, meanEnergy: 10 + dE },
    });
    const f = noiseFloor(built.model, [member(0, 0), member(0.01, 1), member(-0.02, -1)]);
    expect(f.max.meanSurface).toBeCloseTo(0.03, 12); // members 1 and 2 differ by 0.03 m against a 1 m mean
    expect(f.rms.meanSurface).toBeCloseTo(Math.sqrt((0.01 ** 2 + 0.02 ** 2 + 0.03 ** 2) / 3), 12);
    expect(f.max.meanEnergy).toBeCloseTo(0.2, 12);
    expect(f.max.surfaceStd).toBe(0);
    expect(noiseFloor(built.model, [member(0, 0)]).max.meanSurface).toBeNull();
  });
});

describe("statistics command", () => {
  const common = ["statistics", tinyFile, "--methods", "rk4,ssprk3", "--dts", "60,120", "--spin-up", "1200", "--window", "2400", "--sample-every", "600",
    "--reference-dt", "30", "--ensemble", "2"];

  it("writes the JSON shape, CSV and NetCDF; merge of 3 slices equals the unsharded study (wallSeconds masked)", async () => {
    const full = join(dir, "full.json");
    const csv = join(dir, "full.csv");
    const nc4 = join(dir, "full.nc");
    const r = await cli(...common, "--json", full, "--csv", csv, "--netcdf", nc4);
    expect(r.code, r.err).toBe(0);
    const a = JSON.parse(readFileSync(full, "utf8"));
    expect(a.reference).toMatchObject({ method: "rk4", dt: 30, ensemble: 2 });
    for (const s of ["meanSurface", "surfaceStd", "meanThickness", "meanKineticEnergy"]) expect(typeof a.noiseFloor[s]).toBe("number");
    expect(a.rows).toHaveLength(4);
    for (const row of a.rows) {
      for (const k of ["label", "method", "dt", "status", "wallSeconds", "errors", "withinNoise"]) expect(row).toHaveProperty(k);
      for (const s of ["meanSurface", "surfaceStd", "meanThickness", "meanKineticEnergy"]) {
        expect(row.errors).toHaveProperty(s);
        expect([true, false]).toContain(row.withinNoise[s]);
      }
    }
    expect(readFileSync(csv, "utf8").split("\n")[0]).toMatch(/^label,method,dt,dtRatioToRk4,status,errorMeanSurface,/);
    // read back with netcdfjs 4.0.0 (a general-purpose NetCDF-3 reader): one record per run, the reference first
    const ncr = new NetCDFReader(readFileSync(nc4));
    expect(ncr.version).toBe("64-bit offset format");
    expect(ncr.recordDimension.length).toBe(5);
    const gatt = (n: string) => ncr.globalAttributes.find((g) => g.name === n)?.value;
    expect(gatt("Conventions")).toBe("CF-1.8 UGRID-1.0");
    expect(gatt("stepwell_file")).toBe("statistics");
    expect((ncr.getDataVariable("run_dt") as number[]).flat()).toEqual([30, 60, 120, 60, 120]);
    const ncMean = ncr.getDataVariable("mean_surface_height") as number[][];
    expect(ncMean).toHaveLength(5);
    expect(ncMean[0]).toHaveLength(nc);
    const ncEnergy = (ncr.getDataVariable("mean_total_energy") as number[]).flat();
    expect(ncEnergy[0]).toBeCloseTo(a.reference.energy.meanEnergy * 1025, 6);
    const parts: string[] = [];
    for (let i = 1; i <= 3; i++) {
      const p = join(dir, `spart${i}.json`);
      const s = await cli(...common, "--shard", `${i}/3`, "--json", p);
      expect(s.code, s.err).toBe(0);
      parts.push(p);
    }
    const merged = join(dir, "smerged.json");
    const m = await cli("merge", parts[1], parts[2], parts[0], "--json", merged, "--csv", join(dir, "smerged.csv"));
    expect(m.code, m.err).toBe(0);
    expect(maskWall(JSON.parse(readFileSync(merged, "utf8")))).toEqual(maskWall(a));
    const bad = await cli("merge", parts[0], parts[2], "--json", join(dir, "sbad.json"));
    expect(bad.code).toBe(2);
    expect(bad.err).toMatch(/^stepwell merge: PARTS: missing slice 2\/3\n$/);
  });

  it("a user stepper module from a --steppers file runs like a built-in", async () => {
    const steppers = join(dir, "steppers.json");
    writeFileSync(steppers, JSON.stringify([{ module: resolve("public/steppers/kutta3.ts"), label: "mine" }, { method: "ssprk3" }]));
    const out = join(dir, "module.json");
    const r = await cli("statistics", tinyFile, "--steppers", steppers, "--dts", "60", "--spin-up", "600", "--window", "1200", "--sample-every", "600", "--reference-dt", "30", "--json", out);
    expect(r.code, r.err).toBe(0);
    const j = JSON.parse(readFileSync(out, "utf8"));
    expect(j.rows.map((x: { label: string }) => x.label)).toEqual(["mine", "ssprk3"]);
    expect(j.rows[0].status).toBe("completed");
    // without an ensemble there is no floor
    expect(j.noiseFloor.meanSurface).toBeNull();
    expect(j.rows[0].withinNoise.meanSurface).toBeNull();
  });

  const base = ["statistics", tinyFile, "--methods", "rk4", "--dts", "60"];
  const cases: [string, string[], RegExp][] = [
    ["missing --spin-up", [...base, "--window", "1200"], /^stepwell statistics: --spin-up: give the spin-up time/],
    ["window 0", [...base, "--spin-up", "600", "--window", "0"], /^stepwell statistics: --window: must be > 0/],
    ["window < 0", [...base, "--spin-up", "600", "--window", "-5"], /^stepwell statistics: --window: must be > 0/],
    ["negative spin-up", [...base, "--spin-up", "-1", "--window", "1200"], /^stepwell statistics: --spin-up: must be ≥ 0/],
    ["ensemble too large", [...base, "--spin-up", "600", "--window", "1200", "--ensemble", String(LIMITS.ensemble + 1)], /^stepwell statistics: --ensemble: 65 ensemble members is more than the limit of 64/],
    ["ensemble 0", [...base, "--spin-up", "600", "--window", "1200", "--ensemble", "0"], /^stepwell statistics: --ensemble: must be > 0/],
    ["sample interval not dividing the window", [...base, "--spin-up", "600", "--window", "1000", "--sample-every", "300"], /^stepwell statistics: --sample-every: 300 s does not divide --window/],
    ["sample interval shorter than Δt", [...base, "--spin-up", "600", "--window", "1200", "--sample-every", "30"], /^stepwell statistics: --sample-every: the sample interval 30 s is shorter than Δt = 60 s/],
    ["no Δt", ["statistics", tinyFile, "--methods", "rk4", "--spin-up", "600", "--window", "1200"], /^stepwell statistics: --dts: give the time steps/],
    ["unknown option", [...base, "--spin-up", "600", "--window", "1200", "--average", "3"], /^stepwell statistics: --average: unknown option for "statistics"/],
  ];
  for (const [what, argv, re] of cases) {
    it(`${what}: exit 2 with one line naming the argument`, async () => {
      const r = await cli(...argv);
      expect(r.code).toBe(2);
      expect(r.err).toMatch(re);
      expect(r.err.trim().split("\n")).toHaveLength(1);
    });
  }

  it("every bound is checked before work: the plan refuses an ensemble over the limit and too many steps", () => {
    expect(() => planStatistics(built, { steppers: [{ method: "rk4" }], dts: [60], spinUp: 600, window: 1200, sampleEvery: 600, ensemble: 65 })).toThrow(/--ensemble: 65 ensemble members/);
    expect(() => planStatistics(built, { steppers: [{ method: "rk4" }], dts: [1e-3], spinUp: 600, window: 1200, sampleEvery: 600 })).toThrow(/more than the limit of 1000000 steps/);
  });
});

describe("spun-up state file (stepwell-state-1)", () => {
  it("round trip: thickness and velocity to single precision of the anomaly, layer volumes to round-off", () => {
    const run = new Run(built);
    run.advance(40);
    const f = encodeState(built.model, run.state, { scenario: tiny.name, time: run.time, step: run.steps, method: "rk4", dt: run.dt });
    const text = JSON.stringify(f);
    const back = decodeState(built.model, JSON.parse(text));
    expect(back.time).toBe(run.time);
    const { nLayers: L, uOffset, n } = built.model.layout;
    const rest = built.model.restState();
    let worstH = 0;
    let worstU = 0;
    let maxAnom = 0;
    let maxU = 0;
    for (let q = 0; q < L * nc; q++) { worstH = Math.max(worstH, Math.abs(back.state[q] - run.state[q])); maxAnom = Math.max(maxAnom, Math.abs(run.state[q] - rest[q])); }
    for (let q = uOffset; q < n; q++) { worstU = Math.max(worstU, Math.abs(back.state[q] - run.state[q])); maxU = Math.max(maxU, Math.abs(run.state[q])); }
    // float32 keeps 24 significant bits: relative rounding ≤ 2^-24 ≈ 6e-8 (IEEE 754 binary32); the volume fix adds a uniform shift of the same size
    expect(worstH).toBeLessThan(2 * 2 ** -24 * maxAnom + 1e-12);
    expect(worstH).toBeGreaterThan(0);
    expect(worstU).toBeLessThanOrEqual(2 ** -24 * maxU);
    const v0 = layerMass(built.model, run.state);
    const v1 = layerMass(built.model, back.state);
    for (let k = 0; k < L; k++) expect(Math.abs(v1[k] - v0[k]) / v0[k]).toBeLessThan(1e-14);
  });

  it("refuses a file of another mesh, naming the field", () => {
    const f = encodeState(built.model, built.initial, { scenario: tiny.name, time: 0, step: 0, method: "rk4", dt: 60 });
    expect(() => decodeState(built.model, { ...f, nCells: 10 })).toThrow(/^state\.nCells: the file holds 2 layers, 10 cells/);
    expect(() => decodeState(built.model, { ...f, format: "x" })).toThrow(/^state\.format: must be "stepwell-state-1"/);
  });

  const states = existsSync("public/states") ? readdirSync("public/states").filter((f) => f.endsWith(".json")) : [];
  for (const file of states) {
    it(`public/states/${file} opens on its built-in scenario`, () => {
      const raw = JSON.parse(readFileSync(join("public/states", file), "utf8"));
      const b = buildScenario(parseScenario(builtinScenario(raw.scenario), "", { runLength: false }));
      const s = decodeState(b.model, raw);
      expect(s.time).toBeGreaterThan(0);
      expect(readFileSync(join("public/states", file)).length).toBeLessThan(200_000);
    });
  }
});
