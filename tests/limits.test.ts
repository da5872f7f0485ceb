import { describe, expect, it } from "vitest";
import { execFile } from "node:child_process";
import { mkdtempSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { parseScenario } from "../solver/scenario/schema";
import { buildScenario } from "../solver/scenario/build";
import { builtinScenario } from "../solver/scenario/builtins";
import { estimateRunBytes, LIMITS, withLimits } from "../solver/scenario/limits";
import { createRun } from "../solver/driver/run";
import { polygonArea, polygonProblem } from "../solver/mesh/hexLattice";
import { main } from "../solver/cli/main";

const dir = mkdtempSync(join(tmpdir(), "stepwell-limits-"));
const ring = () => builtinScenario("ring-wave") as Record<string, unknown>;
const demo = () => builtinScenario("shelf-gyre-basin") as Record<string, unknown>;
const square = (side: number) => [[0, 0], [side, 0], [side, side], [0, side]];
const polygonBasin = (vertices: unknown, extra: Record<string, unknown> = {}) =>
  ({ ...demo(), mesh: { type: "basin-hex", shape: "polygon", spacing: 20000, vertices, ...extra } });

/** The SolverError a scenario gets, as [field, message]. */
function refusal(raw: unknown, limits = LIMITS): [string, string] {
  try {
    parseScenario(raw, "", { limits });
  } catch (e) {
    const s = e as { field: string; message: string };
    return [s.field, s.message];
  }
  throw new Error("the scenario was accepted");
}

function file(name: string, value: unknown): string {
  const p = join(dir, name);
  writeFileSync(p, JSON.stringify(value));
  return p;
}

/** Run the CLI as a separate process (node + tsx), as a user would; killed after `timeout` ms if it hangs. */
function spawnCli(args: string[], timeout = 60_000): Promise<{ code: number | null; signal: string | null; out: string; err: string }> {
  return new Promise((resolve) => {
    execFile(process.execPath, [join("node_modules", "tsx", "dist", "cli.mjs"), join("solver", "cli", "main.ts"), ...args],
      { timeout, killSignal: "SIGKILL" }, (error, stdout, stderr) => {
        const e = error as (Error & { code?: number | string; signal?: string }) | null;
        resolve({ code: e ? (typeof e.code === "number" ? e.code : null) : 0, signal: e?.signal ?? null, out: stdout, err: stderr });
      });
  });
}

describe("declared limits in the scenario schema", () => {
  it("the bounds live in one exported object and the schema reads them", () => {
    for (const key of ["cellsPerSide", "cells", "memoryBytes", "steps", "duration", "studyDts", "studyMethods", "ensemble", "outputTimes", "polygonVertices"] as const) {
      expect(LIMITS[key]).toBeGreaterThan(0);
    }
    const over = { ...ring(), mesh: { type: "periodic-hex", cellsX: LIMITS.cellsPerSide + 2, cellsY: 8, spacing: 1000 } };
    expect(refusal(over)[0]).toBe("mesh.cellsX");
    // the same scenario under a larger declared bound passes that check
    expect(() => parseScenario({ ...over, mesh: { ...over.mesh, cellsX: 100 } })).not.toThrow();
  });

  it("a mesh too large is refused with its size and memory, before any mesh is built", () => {
    const [field, msg] = refusal({ ...ring(), mesh: { type: "periodic-hex", cellsX: 3000, cellsY: 3000, spacing: 1000 } });
    expect(field).toBe("mesh.cellsX");
    expect(msg).toMatch(/9000000 cells, more than the limit of 250000 cells \(raise it with --max-cells N\)/);
    expect(msg).toMatch(/GB of memory/);
    // raising the cell bound moves the refusal to the memory bound, which names its own flag
    const [, mem] = refusal({ ...ring(), mesh: { type: "periodic-hex", cellsX: 3000, cellsY: 3000, spacing: 1000 } }, withLimits({ cells: 1e7 }));
    expect(mem).toMatch(/memory, more than the limit of .* \(raise it with --max-memory BYTES\)/);
  });

  it("the memory estimate covers what an RK4 run really allocates (process.memoryUsage, Node.js)", () => {
    const raw = { ...ring(), mesh: { type: "periodic-hex", cellsX: 80, cellsY: 80, spacing: 20000 } };
    const before = process.memoryUsage().arrayBuffers;
    const run = createRun(raw);
    run.trackEnergyBudget();
    run.advance(1);
    const used = process.memoryUsage().arrayBuffers - before;
    const estimate = estimateRunBytes(run.mesh.nCells, 2);
    expect(estimate).toBeGreaterThan(used);
    expect(estimate).toBeLessThan(4 * used);
  });

  it("run length: a tiny Δt, a huge duration and too many output times are refused by field", () => {
    expect(refusal({ ...ring(), stepper: { method: "rk4", dt: 1e-300 } })).toEqual([
      "stepper.dt", expect.stringMatching(/^stepper\.dt is 1e-300 s: 86400 s of simulated time would take 8\.64e\+304 steps, more than the limit of 1000000 steps \(raise it with --max-steps N\)$/),
    ]);
    expect(refusal({ ...ring(), duration: 1e300 })[0]).toBe("duration");
    expect(refusal({ ...ring(), outputInterval: 1e-3 })[0]).toBe("outputInterval");
    // a raised step bound accepts what the default refuses
    const long = { ...ring(), stepper: { method: "rk4", dt: 0.05 } };
    expect(refusal(long)[0]).toBe("stepper.dt");
    expect(() => parseScenario(long, "", { limits: withLimits({ steps: 2e6 }) })).not.toThrow();
  });
});

describe("polygon basins and basin sizes", () => {
  it("edges that cross are refused naming both segments", () => {
    const [field, msg] = refusal(polygonBasin([[0, 0], [1e6, 0], [1e6, 1e6], [5e5, -5e5], [0, 1e6]]));
    expect(field).toBe("mesh.vertices[0]");
    expect(msg).toBe("mesh.vertices[0]–[1] crosses [2]–[3]");
    const bow = polygonProblem([[0, 0], [1, 1], [1, 0], [0, 1]]);
    expect(bow).toEqual({ index: 0, message: "–[1] crosses [2]–[3]" });
  });

  it("a repeated vertex, fewer than three distinct vertices, zero area are refused naming the vertex or the list", () => {
    expect(refusal(polygonBasin([[0, 0], [1e6, 0], [1e6, 1e6], [1e6, 0], [0, 1e6]]))[1]).toMatch(/^mesh\.vertices\[3\] repeats vertex \[1\] \(1000000, 0\)$/);
    expect(refusal(polygonBasin([...square(1e6), [0, 0]]))[1]).toMatch(/^mesh\.vertices\[4\] repeats vertex \[0\] .*leave the last vertex out/);
    expect(refusal(polygonBasin([[0, 0], [1e6, 0], [0, 0]]))).toEqual(["mesh.vertices", "mesh.vertices has only 2 distinct vertices; a polygon needs at least 3"]);
    expect(refusal(polygonBasin([[0, 0], [1e6, 0], [2e6, 0]]))).toEqual(["mesh.vertices", "mesh.vertices has zero area: all its vertices lie on one line"]);
    expect(refusal(polygonBasin([[0, 0], [2e6, 0], [1e6, 0], [1e6, 1e6]]))[1]).toBe("mesh.vertices[0]–[1] folds back along [1]–[2]");
  });

  it("the shoelace area of a known polygon (common practice, no source)", () => {
    expect(polygonArea([[0, 0], [4, 0], [4, 3]])).toBe(6);
    expect(polygonArea([[0, 0], [0, 3], [4, 0]])).toBe(-6);
  });

  it("a valid polygon passes, including the main demo's", () => {
    expect(() => parseScenario(demo())).not.toThrow();
    expect(polygonProblem([[0, 0], [2, 0], [2, 2], [1, 1], [0, 2]])).toBeNull(); // concave
  });

  it("a basin too small for one cell is refused with its size and the spacing", () => {
    const [field, msg] = refusal(polygonBasin(square(5000)));
    expect(field).toBe("mesh.spacing");
    expect(msg).toMatch(/^mesh\.spacing is 20000 m, but a basin of 5 km × 5 km \(area 25 km²\) cannot hold one cell of 346 km²/);
    // big enough for one cell but not for seven connected ones: refused by the builder, same field, with size and spacing
    expect(() => buildScenario(parseScenario(polygonBasin(square(40000))))).toThrow(/^mesh\.spacing: a basin of 40 km × 40 km .* holds only \d connected cells? at a spacing of 20000 m/);
  });

  it("each error names the field the user got wrong: width on a polygon basin is mesh.width", () => {
    expect(refusal(polygonBasin(square(1e6), { width: -5 }))).toEqual(["mesh.width", "mesh.width [m] must be > 0"]);
    expect(refusal(polygonBasin(square(1e6), { height: "wide" }))[0]).toBe("mesh.height");
    const rect = { ...demo(), mesh: { type: "basin-hex", shape: "rectangle", width: 1e6, height: 1e6, spacing: 20000, vertices: square(1) } };
    expect(refusal(rect)[0]).toBe("mesh.vertices");
  });

  it("width and height stretch a polygon basin's outline", () => {
    const s = parseScenario(polygonBasin(square(1e6), { width: 5e5 }));
    const b = buildScenario(s);
    const xs = Array.from(b.mesh.cellX);
    expect(Math.max(...xs) - Math.min(...xs)).toBeLessThan(5e5);
    expect(Math.max(...xs) - Math.min(...xs)).toBeGreaterThan(5e5 - 3 * 20000);
  });

  it("a polygon spanning the globe many times is refused by its extent", () => {
    const [field, msg] = refusal(polygonBasin(square(1e10)));
    expect(field).toBe("mesh.vertices");
    expect(msg).toMatch(/cells across at mesh\.spacing 20000 m, more than the limit of 4096 cells along a side/);
  });
});

describe("oversized and endless inputs through the CLI: exit 2 and one line naming the field", () => {
  const tooManyDts = Array.from({ length: LIMITS.studyDts + 1 }, (_, k) => 10 + k).join(",");
  const tooManyMethods = Array.from({ length: LIMITS.studyMethods + 1 }, () => "rk4").join(",");
  // memory figures follow the declared estimate: 10¹⁰ cells × (2400 + 2 layers × 32 × 24) bytes = 39.4 TB
  const cases: { name: string; args: () => string[]; field: RegExp }[] = [
    { name: "periodic 100000 × 100000", args: () => ["run", file("huge.json", { ...ring(), mesh: { type: "periodic-hex", cellsX: 100000, cellsY: 100000, spacing: 1000 } })], field: /^stepwell run: mesh\.cellsX is 100000 cells along a side, more than the limit of 4096; the 100000 × 100000 mesh would need about 39\.4 TB of memory$/ },
    { name: "periodic 3000 × 3000", args: () => ["run", file("big.json", { ...ring(), mesh: { type: "periodic-hex", cellsX: 3000, cellsY: 3000, spacing: 1000 } })], field: /^stepwell run: mesh\.cellsX × mesh\.cellsY = 3000 × 3000 = 9000000 cells, .*--max-cells.* GB of memory/ },
    { name: "memory over its bound with the cell bound raised", args: () => ["run", file("mem.json", { ...ring(), mesh: { type: "periodic-hex", cellsX: 1400, cellsY: 1400, spacing: 1000 } }), "--max-cells", "3000000"], field: /^stepwell run: mesh\.cellsX .* would need about .* GB of memory, more than the limit of .*--max-memory/ },
    { name: "--dt 1e-300", args: () => ["run", "ring-wave", "--dt", "1e-300"], field: /^stepwell run: --dt is 1e-300 s: .* steps, more than the limit of 1000000 steps \(raise it with --max-steps N\)/ },
    { name: "--duration 1e300", args: () => ["run", "ring-wave", "--duration", "1e300"], field: /^stepwell run: --duration is 1e\+300 s, more than the limit/ },
    { name: "scenario dt 1e-300", args: () => ["run", file("tiny-dt.json", { ...ring(), stepper: { method: "rk4", dt: 1e-300 } })], field: /^stepwell run: stepper\.dt is 1e-300 s/ },
    { name: "scenario duration 1e300", args: () => ["run", file("long.json", { ...ring(), duration: 1e300 })], field: /^stepwell run: duration is 1e\+300 s/ },
    { name: "--steps 1e12", args: () => ["run", "ring-wave", "--steps", "1000000000000"], field: /^stepwell run: --steps: 1\.00e\+12 steps is more than the limit of 1000000 steps \(raise it with --max-steps N\)/ },
    { name: "too many Δt values", args: () => ["sweep", "ring-wave", "--methods", "rk4", "--dts", tooManyDts], field: /^stepwell sweep: --dts: 65 Δt values is more than the limit of 64 in one study/ },
    { name: "too many methods", args: () => ["sweep", "ring-wave", "--methods", tooManyMethods, "--dts", "60"], field: /^stepwell sweep: --methods: 33 steppers is more than the limit of 32/ },
    { name: "a sweep Δt factor that means endless runs", args: () => ["sweep", "ring-wave", "--methods", "rk4", "--dt-factors", "1e-12"], field: /^stepwell sweep: --dt-factors is .* steps, more than the limit/ },
    { name: "a reference Δt that means an endless reference run", args: () => ["sweep", "ring-wave", "--methods", "rk4", "--dts", "60", "--reference-dt", "1e-9"], field: /^stepwell sweep: --reference-dt is 1e-9 s/ },
    { name: "a huge polygon basin", args: () => ["run", file("globe.json", polygonBasin(square(1e10)))], field: /^stepwell run: mesh\.vertices makes a basin of .* wider than the Earth's circumference; .* more than the limit of 4096 cells along a side/ },
    { name: "a fine spacing on a big basin", args: () => ["modes", file("fine.json", { ...demo(), mesh: { ...(demo().mesh as object), spacing: 100 } })], field: /^stepwell modes: mesh\.spacing is 100 m: a basin of 1200 km × 1000 km .* would be 12000 cells across, more than the limit of 4096 cells along a side; about \d+ cells would need about [\d.]+ GB of memory$/ },
    { name: "output every millisecond", args: () => ["run", file("chatty.json", { ...ring(), outputInterval: 1e-3 })], field: /^stepwell run: outputInterval is 0\.001 s: 86400000 output times/ },
    { name: "stability from a tiny start Δt", args: () => ["stability", "ring-wave", "--start-dt", "1e-300"], field: /^stepwell stability: --start-dt is 1e-300 s/ },
  ];
  it(`has at least 10 cases (${cases.length})`, () => expect(cases.length).toBeGreaterThanOrEqual(10));
  for (const c of cases) {
    // each runs as its own process; the timeout only catches a hang (the check is that it exits by itself with code 2)
    it(c.name, async () => {
      const r = await spawnCli(c.args());
      expect(r.signal).toBeNull();
      expect(r.code).toBe(2);
      expect(r.out).toBe("");
      const lines = r.err.trimEnd().split("\n");
      expect(lines).toHaveLength(1);
      expect(lines[0]).toMatch(c.field);
    }, 90_000);
  }

  it("a stability study refuses a minimum step count over the bound, and its halving stops at the bound", async () => {
    let err = "";
    const code = await main(["stability", "ring-wave", "--min-steps", "2000000"], () => {}, (t) => { err += t; });
    expect(code).toBe(2);
    expect(err).toMatch(/^stepwell stability: --min-steps: 2000000 steps is more than the limit of 1000000 steps \(raise it with --max-steps N\)$/);
  });

  it("in-process the same inputs give the same exit code (no internal error)", async () => {
    let err = "";
    const code = await main(["run", file("huge2.json", { ...ring(), mesh: { type: "periodic-hex", cellsX: 100000, cellsY: 100000, spacing: 1000 } })], () => {}, (s) => { err += s; });
    expect(code).toBe(2);
    expect(err).not.toMatch(/internal error/);
  });
});
