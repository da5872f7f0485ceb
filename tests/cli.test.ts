import { describe, expect, it } from "vitest";
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { main } from "../solver/cli/main";
import { BUILTIN_SCENARIOS } from "../solver/scenario/builtins";

/** Run the CLI in-process and capture what it prints. */
async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = "";
  let err = "";
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; });
  return { code, out, err };
}

const dir = mkdtempSync(join(tmpdir(), "stepwell-cli-"));

describe("stepwell CLI", () => {
  it("scenarios lists every built-in with a description", async () => {
    const file = join(dir, "list.json");
    const r = await cli("scenarios", "--json", file);
    expect(r.code).toBe(0);
    const j = JSON.parse(readFileSync(file, "utf8"));
    expect(j.scenarios.map((s: { name: string }) => s.name)).toEqual(BUILTIN_SCENARIOS.map((s) => s.name));
    for (const s of j.scenarios) expect(s.description.length).toBeGreaterThan(20);
  });

  for (const b of BUILTIN_SCENARIOS) {
    it(`run and modes work on the built-in "${b.name}"`, async () => {
      const file = join(dir, `${b.name}.json`);
      const r = await cli("run", b.name, "--steps", "3", "--json", file, "--quiet");
      expect(r.err).toBe("");
      expect(r.code).toBe(0);
      const j = JSON.parse(readFileSync(file, "utf8"));
      expect(j.status).toBe("completed");
      expect(j.steps).toBe(3);
      expect(j.simulatedSeconds).toBeCloseTo(3 * b.stepper.dt, 9);
      expect(j.rhsEvaluations).toBe(12); // RK4: four tendency evaluations per step
      expect(j.mass.initial).toHaveLength(b.layers.length);
      expect(j.mass.maxRelativeDrift).toBeLessThan(1e-13);
      expect(j).toHaveProperty("energy.maxRelativeDrift");
      expect(j.unstable).toBeNull();
      const mfile = join(dir, `${b.name}-modes.json`);
      const m = await cli("modes", b.name, "--json", mfile);
      expect(m.code).toBe(0);
      const mj = JSON.parse(readFileSync(mfile, "utf8"));
      expect(mj.modes).toHaveLength(b.layers.length);
      expect(mj.modes[0]).toHaveProperty("speed");
      expect(mj.modes[0]).toHaveProperty("rossbyRadius");
      // barotropic speed close to √(g H_total) (Gill 1982, §6.2)
      const H = b.layers.reduce((a, l) => a + l.thickness, 0);
      expect(Math.abs(mj.modes[0].speed - Math.sqrt(9.81 * H)) / mj.modes[0].speed).toBeLessThan(2e-3);
      expect(mj.rk4DtLimit).toBeGreaterThan(b.stepper.dt * 0.5);
    });
  }

  it("an unstable run is a result: exit 0, status unstable, where and why", async () => {
    const file = join(dir, "unstable.json");
    const r = await cli("run", "ring-wave", "--dt", "600", "--steps", "400", "--json", file, "--quiet");
    expect(r.code).toBe(0);
    const j = JSON.parse(readFileSync(file, "utf8"));
    expect(j.status).toBe("unstable");
    expect(j.unstable.step).toBeGreaterThan(0);
    expect(j.unstable).toHaveProperty("time");
    expect(j.unstable.reason.length).toBeGreaterThan(5);
    expect(r.out).toMatch(/UNSTABLE at step/);
  });

  it("a scenario file on disk runs", async () => {
    const file = join(dir, "mine.json");
    writeFileSync(file, JSON.stringify({
      name: "mine", mesh: { type: "periodic-hex", cellsX: 48, cellsY: 48, spacing: 20000 },
      layers: [{ thickness: 500, density: 1025.0 }, { thickness: 3500, density: 1027.0 }],
      physics: { gravity: 9.81, f0: 1e-4, beta: 0 }, initial: { type: "rest" },
      stepper: { method: "rk4", dt: 60 }, duration: 86400, outputInterval: 3600,
    }));
    const r = await cli("run", file, "--steps", "2", "--quiet");
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/status\s+completed/);
  });

  const bad: [string, string[], RegExp][] = [
    ["unknown command", ["fly"], /unknown command "fly"/],
    ["missing scenario", ["run"], /SCENARIO: missing/],
    ["unknown scenario", ["run", "no-such-thing"], /neither a built-in scenario/],
    ["non-numeric dt", ["run", "ring-wave", "--dt", "fast"], /--dt: "fast" is not a number/],
    ["zero dt", ["run", "ring-wave", "--dt", "0"], /--dt: must be > 0/],
    ["unknown method", ["run", "ring-wave", "--method", "magic"], /stepper\.method: unknown method "magic"/],
    ["unknown option", ["run", "ring-wave", "--colour", "red"], /--colour: unknown option/],
    ["both steps and duration", ["run", "ring-wave", "--steps", "3", "--duration", "100"], /--steps: give either/],
  ];
  for (const [what, argv, pattern] of bad) {
    it(`bad input exits 2 with one line naming the problem: ${what}`, async () => {
      const r = await cli(...argv);
      expect(r.code).toBe(2);
      expect(r.err.trim().split("\n")).toHaveLength(1);
      expect(r.err).toMatch(pattern);
      expect(r.err).not.toMatch(/\bat .*\.ts:\d+/); // no stack trace
    });
  }

  it("a malformed scenario file exits 2 naming the field", async () => {
    const file = join(dir, "bad.json");
    writeFileSync(file, JSON.stringify({ ...BUILTIN_SCENARIOS[1], layers: [{ thickness: 500, density: 1027 }, { thickness: 3500, density: 1025 }] }));
    const r = await cli("run", file);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/layers\[1\]\.density must be greater than layers\[0\]\.density/);
    writeFileSync(file, "{ not json");
    const r2 = await cli("run", file);
    expect(r2.code).toBe(2);
    expect(r2.err).toMatch(/not valid JSON/);
  });
});
