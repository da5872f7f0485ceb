import { afterAll, describe, expect, it } from "vitest";
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { NetCDFReader } from "netcdfjs";
import { main } from "../solver/cli/main";
import { createRun, type Run } from "../solver/driver/run";
import { decodeValues, dataRange, encodeFile, encodeHeader, parseHeader, planFile } from "../solver/io/netcdf";
import { restoreRun, RunFileWriter } from "../solver/io/runOutput";
import { listMethods } from "../solver/time/registry";
import { registerModule } from "../solver/time/userModules";
import type { StepperDefinition } from "../solver/api";

/**
 * Restarts, bit for bit: N steps, a file, M more steps from the file equal N + M steps without interruption,
 * for every built-in stepper; two runs of one command are identical; bad restart input is one line, exit 2.
 * Files are read back with netcdfjs 4.0.0 (a general-purpose NetCDF reader from the npm registry).
 */

async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = "";
  let err = "";
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; });
  return { code, out, err };
}

const dir = mkdtempSync(join(tmpdir(), "stepwell-restart-"));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const base = {
  name: "restart-small",
  mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000, jitter: 0.05, seed: 3 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 1500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0, wind: { type: "uniform", x: 0.05, y: 0.02 }, bottomDrag: 1e-6, viscosity: 500 },
  initial: { type: "bump", amplitude: 1, radius: 40000 },
  stepper: { method: "rk4", dt: 60 } as Record<string, unknown>,
  duration: 1200,
  outputInterval: 300,
};

/** Options a method needs to run at all: the classical RK4 tableau (Kutta 1901) and ETD2RK (Cox & Matthews 2002). */
const EXTRA: Record<string, Record<string, unknown>> = {
  "custom-rk": { tableau: { name: "kutta-rk4", order: 4, a: [[], [0.5], [0, 0.5], [0, 0, 1]], b: [1 / 6, 1 / 3, 1 / 3, 1 / 6], c: [0, 0.5, 0.5, 1] } },
  "custom-exp": { phiTable: { c: [0, 1], a: [[], [[{ k: 1, coef: 1 }]]], b: [[{ k: 1, coef: 1 }, { k: 2, coef: -1 }], [{ k: 2, coef: 1 }]], order: 2 } },
};

function scenarioFile(name: string, s: unknown): string {
  const f = join(dir, `${name}.json`);
  writeFileSync(f, JSON.stringify(s));
  return f;
}

/** The stored state of the last record (or record `i`): thickness and velocity as written, time and step. */
function lastState(file: string, i?: number) {
  const r = new NetCDFReader(readFileSync(file));
  const n = r.recordDimension.length;
  const k = i ?? n - 1;
  const rec = (v: string) => (r.getDataVariable(v) as unknown[])[k];
  return { h: rec("layer_thickness") as number[], u: rec("normal_velocity") as number[], time: rec("time") as number, step: rec("step") as number };
}

describe("restart from a NetCDF file: bit for bit", () => {
  for (const m of listMethods()) {
    it(`${m.name}: 4 steps, a file, 3 more steps from it == 7 steps without interruption`, async () => {
      const sf = scenarioFile(`m-${m.name}`, { ...base, stepper: { method: m.name, dt: 60, ...(EXTRA[m.name] ?? {}) } });
      const full = join(dir, `${m.name}-full.nc`);
      const first = join(dir, `${m.name}-first.nc`);
      const second = join(dir, `${m.name}-second.nc`);
      const jFull = join(dir, `${m.name}-full.json`);
      const jSecond = join(dir, `${m.name}-second.json`);
      const a = await cli("run", sf, "--steps", "7", "--netcdf", full, "--json", jFull, "--quiet");
      expect(a.err).toBe("");
      expect(a.code).toBe(0);
      expect((await cli("run", sf, "--steps", "4", "--netcdf", first, "--quiet")).code).toBe(0);
      const b = await cli("run", sf, "--restart", first, "--steps", "3", "--netcdf", second, "--json", jSecond, "--quiet");
      expect(b.err).toBe("");
      expect(b.code).toBe(0);
      const x = lastState(full);
      const y = lastState(second);
      expect(y.step).toBe(7);
      expect(y.time).toBe(x.time);
      expect(y.h).toEqual(x.h); // toEqual compares with Object.is: bitwise for finite doubles
      expect(y.u).toEqual(x.u);
      const jf = JSON.parse(readFileSync(jFull, "utf8"));
      const js = JSON.parse(readFileSync(jSecond, "utf8"));
      expect(js.mass.final).toEqual(jf.mass.final);
      expect(js.energy.final).toBe(jf.energy.final);
      expect(js.steps).toBe(7);
      expect(js.restartedFrom).toMatchObject({ time: 240, step: 4 });
    });
  }

  it("--restart-time picks an earlier output time", async () => {
    const sf = scenarioFile("rt", base);
    const full = join(dir, "rt-full.nc");
    expect((await cli("run", sf, "--steps", "9", "--netcdf", full, "--quiet")).code).toBe(0); // records at steps 0, 5, 9
    const again = join(dir, "rt-again.nc");
    const r = await cli("run", sf, "--restart", full, "--restart-time", "300", "--steps", "4", "--netcdf", again, "--quiet");
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/Restarted from .* at t = 300 s \(step 5\)/);
    const x = lastState(full);
    const y = lastState(again);
    expect(y.step).toBe(9);
    expect(y.h).toEqual(x.h);
    expect(y.u).toEqual(x.u);
  });

  it("without --steps a restart runs on to the scenario's duration", async () => {
    const sf = scenarioFile("todur", base);
    const first = join(dir, "todur-first.nc");
    expect((await cli("run", sf, "--steps", "15", "--netcdf", first, "--quiet")).code).toBe(0);
    const json = join(dir, "todur.json");
    expect((await cli("run", sf, "--restart", first, "--json", json, "--quiet")).code).toBe(0);
    const j = JSON.parse(readFileSync(json, "utf8"));
    expect(j.steps).toBe(20); // 1200 s / 60 s
    expect(j.simulatedSeconds).toBe(1200);
  });

  it("a stepper that carries values between steps (two-step Adams–Bashforth) restarts bit for bit through saveState/loadState", () => {
    // AB2: x_{n+1} = x_n + Δt (3/2 F_n − 1/2 F_{n−1}), started with one forward Euler step
    // (Hairer, Nørsett & Wanner 1993, Solving ODEs I, §III.1); F_{n−1} is the memory it carries.
    const ab2: StepperDefinition = {
      name: "ab2-test", order: 2, description: "two-step Adams–Bashforth",
      create(problem) {
        const n = problem.n;
        const F = problem.newVector();
        const Fp = problem.newVector();
        let started = 0;
        return {
          step(x, t, dt) {
            problem.tendency(F, x, t);
            if (started) for (let q = 0; q < n; q++) x[q] += dt * (1.5 * F[q] - 0.5 * Fp[q]);
            else for (let q = 0; q < n; q++) x[q] += dt * F[q];
            Fp.set(F);
            started = 1;
          },
          saveState() { const s = new Float64Array(n + 1); s[0] = started; s.set(Fp, 1); return s; },
          loadState(d) { started = d[0]; Fp.set(d.subarray(1)); },
        };
      },
    };
    registerModule("test:ab2", ab2);
    const fresh = () => { const r = createRun(base); r.setStepper({ method: "ab2-test", module: "test:ab2", dt: 60 }); return r; };
    const whole = fresh();
    whole.advance(7);
    const first = fresh();
    first.advance(4);
    const w = new RunFileWriter(first, { version: "test", every: 240 });
    expect(w.stateLength).toBe(first.model.n + 1);
    const bytes = new Uint8Array(w.layout.recordStart + w.layout.recordSize);
    bytes.set(encodeHeader(w.layout, 1));
    for (const f of w.fixedData()) bytes.set(f.bytes, f.begin);
    bytes.set(w.fill().bytes, w.layout.recordStart);
    const h = parseHeader(bytes);
    const read = (name: string) => { const v = h.variables.get(name)!; const r = dataRange(h, v, 0); return decodeValues(v.type, bytes, r.offset, v.count) as Float64Array; };
    const stored = {
      thickness: read("layer_thickness"), velocity: read("normal_velocity"), time: read("time")[0], step: read("step")[0],
      stepperState: read("stepper_state"), stepperLabel: h.variables.get("stepper_state")!.attributes.get("stepper_label") as string,
    };
    const second = fresh();
    expect(restoreRun(second, stored)).toBeNull();
    second.advance(3);
    expect(second.steps).toBe(7);
    expect(Array.from(second.state)).toEqual(Array.from(whole.state));
    // the check can fail: without the carried state the continuation differs
    const amnesic = fresh();
    const note = restoreRun(amnesic, { ...stored, stepperState: undefined });
    expect(note).toMatch(/starts afresh/);
    amnesic.advance(3);
    expect(Array.from(amnesic.state)).not.toEqual(Array.from(whole.state));
  });
});

describe("reproducibility", () => {
  for (const method of ["rk4", "split-explicit"]) {
    it(`${method}: two runs of the same command give identical JSON (but wall time) and identical NetCDF bytes`, async () => {
      const sf = scenarioFile(`rep-${method}`, { ...base, stepper: { method, dt: 60 } });
      const nc = join(dir, `rep-${method}.nc`);
      const json = join(dir, `rep-${method}-result.json`);
      const results: { json: Record<string, unknown>; nc: Buffer }[] = [];
      for (let i = 0; i < 2; i++) {
        const r = await cli("run", sf, "--steps", "12", "--every", "120", "--netcdf", nc, "--json", json, "--quiet");
        expect(r.err).toBe("");
        expect(r.code).toBe(0);
        // every wall-clock figure (the run's and the energy budget's) removed
        const j = JSON.parse(readFileSync(json, "utf8"), (k, v) => (k === "wallSeconds" ? undefined : v));
        results.push({ json: j, nc: readFileSync(nc) });
      }
      expect(results[1].json).toEqual(results[0].json);
      expect(Buffer.compare(results[0].nc, results[1].nc)).toBe(0);
    });
  }
});

describe("bad restart input: one line naming the problem, exit 2", () => {
  const good = join(dir, "bad-good.nc");
  const sf = scenarioFile("bad-base", base);
  const expectOneLine = async (argv: string[], re: RegExp) => {
    const r = await cli(...argv);
    expect(r.code).toBe(2);
    expect(r.err.trimEnd().split("\n")).toHaveLength(1);
    expect(r.err).toMatch(re);
    expect(r.err).not.toMatch(/\bat .*\.ts:\d+/); // no stack trace
  };

  it("a missing file, a file that is not NetCDF, NetCDF that is not Stepwell output", async () => {
    await expectOneLine(["run", sf, "--restart", join(dir, "nowhere.nc")], /^stepwell run: --restart: .*nowhere\.nc does not exist/);
    await expectOneLine(["run", sf, "--restart", sf], /^stepwell run: --restart: .*is not a NetCDF-3 file/);
    const other = join(dir, "foreign.nc");
    const layout = planFile({ dimensions: [{ name: "x", length: 2 }], attributes: { title: "not ours" }, variables: [{ name: "v", type: "double", dimensions: ["x"] }] });
    writeFileSync(other, encodeFile(layout, { v: [1, 2] }, []));
    await expectOneLine(["run", sf, "--restart", other], /^stepwell run: --restart: .*foreign\.nc is NetCDF but not Stepwell run output/);
  });

  it("a mesh or layer count that does not match the scenario", async () => {
    expect((await cli("run", sf, "--steps", "2", "--netcdf", good, "--quiet")).code).toBe(0);
    await expectOneLine(["run", scenarioFile("bad-mesh", { ...base, mesh: { ...base.mesh, cellsX: 10 } }), "--restart", good],
      /^stepwell run: --restart: .* holds a mesh of 64 cells and 192 edges; scenario "restart-small" has 80 cells and 240 edges/);
    await expectOneLine(["run", scenarioFile("bad-seed", { ...base, mesh: { ...base.mesh, seed: 4 } }), "--restart", good],
      /^stepwell run: --restart: .* holds another mesh than scenario "restart-small"/);
    await expectOneLine(["run", scenarioFile("bad-layers", { ...base, layers: [...base.layers, { thickness: 2000, density: 1028 }] }), "--restart", good],
      /^stepwell run: --restart: .* has 2 layers; scenario "restart-small" has 3/);
  });

  it("a time not in the file, and options that need another", async () => {
    expect((await cli("run", sf, "--steps", "2", "--netcdf", good, "--quiet")).code).toBe(0);
    await expectOneLine(["run", sf, "--restart", good, "--restart-time", "123"], /^stepwell run: --restart-time: 123 s is not an output time of .*; it holds t = 0, 120 s/);
    await expectOneLine(["run", sf, "--restart-time", "0"], /^stepwell run: --restart-time: needs --restart FILE/);
    await expectOneLine(["run", sf, "--every", "60"], /^stepwell run: --every: needs --netcdf FILE/);
    await expectOneLine(["run", sf, "--restart", good, "--netcdf", good], /^stepwell run: --netcdf: must name another file than --restart/);
    await expectOneLine(["run", sf, "--steps", "10", "--netcdf", join(dir, "x.nc"), "--every", "-5"], /^stepwell run: --every: must be > 0/);
  });
});
