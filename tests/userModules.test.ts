import { describe, expect, it } from "vitest";
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { main } from "../solver/cli/main";

/** Run the CLI in-process and capture what it prints. */
async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = "";
  let err = "";
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; });
  return { code, out, err };
}

const dir = mkdtempSync(join(tmpdir(), "stepwell-modules-"));
const small = {
  name: "small", mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 }, initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 20 }, duration: 200,
};
const smallFile = join(dir, "small.json");
writeFileSync(smallFile, JSON.stringify(small));

/** A module file whose step body is `body` (k, y and n are in scope). */
function moduleFile(name: string, body: string, extra = ""): string {
  const f = join(dir, `${name}.mjs`);
  writeFileSync(f, `export default {
  name: "${name}", order: 1, description: "test module",${extra}
  create(problem, options) {
    const k = problem.newVector(), n = problem.n;
    return {
      step(x, t, dt) {
        problem.tendency(k, x, t);
${body}
      },
    };
  },
};
`);
  return f;
}
const euler = "        for (let i = 0; i < n; i++) x[i] += dt * k[i];";

describe("user stepper modules on the command line: every fault is one clear line and exit 2", () => {
  it("a working module runs like a built-in, with its tendency evaluations counted by the problem", async () => {
    const f = moduleFile("plain-euler", euler);
    const json = join(dir, "euler.json");
    const r = await cli("run", smallFile, "--stepper-module", f, "--dt", "5", "--steps", "4", "--json", json, "--quiet");
    expect(r.err).toBe("");
    expect(r.code).toBe(0);
    const j = JSON.parse(readFileSync(json, "utf8"));
    expect(j.status).toBe("completed");
    expect(j.method).toBe("plain-euler");
    expect(j.rhsEvaluations).toBe(4);
    expect(j.mass.maxRelativeDrift).toBeLessThan(1e-13);
  });

  const faults: [string, () => string[], RegExp][] = [
    ["file not found", () => ["--stepper-module", join(dir, "missing.ts")], /--stepper-module: stepper module file not found: .*missing\.ts/],
    ["wrong extension", () => { const f = join(dir, "stepper.txt"); writeFileSync(f, "x"); return ["--stepper-module", f]; }, /must be a \.js, \.mjs or \.ts file/],
    ["a syntax error", () => { const f = join(dir, "broken.mjs"); writeFileSync(f, "export default { name: 'x',, }\n"); return ["--stepper-module", f]; }, /--stepper-module: cannot load .*broken\.mjs/],
    ["no default export", () => { const f = join(dir, "named.mjs"); writeFileSync(f, "export const stepper = {};\n"); return ["--stepper-module", f]; }, /has no default export/],
    ["missing name", () => { const f = join(dir, "noname.mjs"); writeFileSync(f, "export default { order: 1, create() { return { step() {} }; } };\n"); return ["--stepper-module", f]; }, /"name" must be lower-case letters/],
    ["missing order", () => { const f = join(dir, "noorder.mjs"); writeFileSync(f, "export default { name: 'no-order', create() { return { step() {} }; } };\n"); return ["--stepper-module", f]; }, /"order" must be the declared order/],
    ["missing create", () => { const f = join(dir, "nocreate.mjs"); writeFileSync(f, "export default { name: 'no-create', order: 1 };\n"); return ["--stepper-module", f]; }, /"create" must be a function/],
    ["create returns no step", () => { const f = join(dir, "nostep.mjs"); writeFileSync(f, "export default { name: 'no-step', order: 1, create() { return {}; } };\n"); return ["--stepper-module", f]; }, /create must return an object with a step\(x, t, dt\) method/],
    ["create throws", () => {
      const f = join(dir, "create-throws.mjs");
      writeFileSync(f, "export default {\n  name: 'create-throws', order: 1,\n  create() {\n    throw new Error('no linear part for me');\n  },\n};\n");
      return ["--stepper-module", f];
    }, /stepper "create-throws": create threw: no linear part for me \(at .*create-throws\.mjs:4:\d+\)/],
    ["step throws", () => ["--stepper-module", moduleFile("step-throws", "        if (t > 30) throw new RangeError('index out of range');\n" + euler)], /stepper "step-throws": step at t = 40 s threw: RangeError: index out of range \(at .*step-throws\.mjs:8:\d+\)/],
    ["unknown option", () => ["--stepper-module", moduleFile("no-options", euler), "--option", "gain=2"], /stepper\.gain: method "no-options" has no option "gain"; it takes no options/],
    ["option out of range", () => ["--stepper-module", moduleFile("gain", euler, `\n  options: { gain: { type: "number", default: 1, min: 0, max: 2, help: "a gain" } },`), "--option", "gain=5"], /stepper\.gain must be ≤ 2/],
  ];
  for (const [what, args, pattern] of faults) {
    it(what, async () => {
      const r = await cli("run", smallFile, ...args(), "--steps", "4", "--quiet");
      expect(r.code).toBe(2);
      expect(r.err.trim().split("\n")).toHaveLength(1);
      expect(r.err).toMatch(pattern);
      expect(r.err).not.toMatch(/internal error|\n\s+at /);
    });
  }

  it("a step that writes NaN is a blow-up: status unstable with step, place and reason, the last good state kept", async () => {
    const f = moduleFile("nan-writer", euler + "\n        if (t > 30) x[n - 1] = NaN;");
    const json = join(dir, "nan.json");
    const r = await cli("run", smallFile, "--stepper-module", f, "--dt", "10", "--steps", "10", "--json", json, "--quiet");
    expect(r.code).toBe(0);
    const j = JSON.parse(readFileSync(json, "utf8"));
    expect(j.status).toBe("unstable");
    expect(j.unstable.step).toBe(5);
    expect(j.unstable.field).toBe("velocity");
    expect(j.unstable.reason).toMatch(/NaN/);
    expect(j.steps).toBe(4);
  });

  it("template writes a module that run accepts unchanged, as TypeScript and as JavaScript, and its option is declared", async () => {
    for (const file of [join(dir, "tpl", "starter.ts"), join(dir, "tpl", "starter.mjs")]) {
      expect((await cli("template", "my-starter", "--out", file)).code).toBe(0);
      const json = file + ".json";
      const r = await cli("run", smallFile, "--stepper-module", file, "--dt", "10", "--steps", "5", "--option", "alpha=0.6666666666666666", "--json", json, "--quiet");
      expect(r.err).toBe("");
      const j = JSON.parse(readFileSync(json, "utf8"));
      expect(j.status).toBe("completed");
      expect(j.method).toBe("my-starter");
      expect(j.rhsEvaluations).toBe(10);
    }
    expect((await cli("template", "Bad Name")).code).toBe(2);
  });

  it("a scenario names its module relative to its own file; a --steppers file likewise, in sweep and stability", async () => {
    const sub = join(dir, "nested");
    mkdirSync(join(sub, "lib"), { recursive: true });
    writeFileSync(join(sub, "lib", "euler.mjs"), readFileSync(moduleFile("lib-euler", euler), "utf8").replace('"lib-euler"', '"lib-euler"'));
    const scen = join(sub, "scenario.json");
    writeFileSync(scen, JSON.stringify({ ...small, stepper: { module: "lib/euler.mjs", dt: 5 } }));
    const json = join(dir, "nested.json");
    const r = await cli("run", scen, "--steps", "3", "--json", json, "--quiet");
    expect(r.err).toBe("");
    expect(JSON.parse(readFileSync(json, "utf8")).method).toBe("lib-euler");
    const steppers = join(sub, "steppers.json");
    writeFileSync(steppers, JSON.stringify([{ method: "rk4" }, { module: "lib/euler.mjs", label: "mine" }]));
    const sw = join(dir, "sweep.json");
    const s = await cli("sweep", smallFile, "--steppers", steppers, "--dts", "20,10", "--duration", "200", "--json", sw, "--no-cache");
    expect(s.code).toBe(0);
    const rows = JSON.parse(readFileSync(sw, "utf8")).rows as { label: string; method: string; status: string }[];
    expect(rows.map((x) => x.label)).toEqual(["rk4", "rk4", "mine", "mine"]);
    expect(rows.filter((x) => x.label === "mine").every((x) => x.method === "lib-euler")).toBe(true);
    const st = join(dir, "stab.json");
    const t = await cli("stability", smallFile, "--steppers", steppers, "--duration", "2000", "--shard", "2/2", "--json", st);
    expect(t.code).toBe(0);
    const part = JSON.parse(readFileSync(st, "utf8"));
    expect(part.results[0].method).toBe("lib-euler");
    expect(part.results[0].maxStableDt).toBeGreaterThan(0);
  });
});
