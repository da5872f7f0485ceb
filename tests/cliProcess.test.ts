/**
 * The command line as a process: signals, a reader that stops reading, paths relative to where the user starts,
 * the `stepwell` launcher, shard jobs sharing one cache. Each test starts the real launcher (bin/stepwell.mjs) as
 * a child process on a small scenario.
 */
import { describe, expect, it } from "vitest";
import { spawn } from "node:child_process";
import { mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";

const root = fileURLToPath(new URL("..", import.meta.url));
const launcher = join(root, "bin", "stepwell.mjs");
const dir = mkdtempSync(join(tmpdir(), "stepwell-process-"));

interface Child {
  out: () => string;
  err: () => string;
  /** Resolves when some output matches (or the process has ended, so that a test fails on its assertions instead of timing out). */
  waitFor: (stream: "out" | "err", pattern: RegExp) => Promise<void>;
  kill: (signal: NodeJS.Signals) => void;
  closeOutput: () => void;
  done: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
}

function start(command: string, args: string[], o: { cwd?: string; env?: NodeJS.ProcessEnv } = {}): Child {
  const p = spawn(command, args, { cwd: o.cwd ?? root, env: { ...process.env, ...o.env }, stdio: ["ignore", "pipe", "pipe"] });
  const text = { out: "", err: "" };
  const waiters: { stream: "out" | "err"; pattern: RegExp; resolve: () => void }[] = [];
  const check = () => {
    for (let i = waiters.length - 1; i >= 0; i--) {
      if (waiters[i].pattern.test(text[waiters[i].stream])) { waiters[i].resolve(); waiters.splice(i, 1); }
    }
  };
  p.stdout.on("data", (d) => { text.out += d; check(); });
  p.stderr.on("data", (d) => { text.err += d; check(); });
  p.stdout.on("error", () => { /* closed on purpose */ });
  p.on("close", () => { for (const w of waiters.splice(0)) w.resolve(); });
  return {
    out: () => text.out,
    err: () => text.err,
    waitFor: (stream, pattern) => new Promise((resolve) => { waiters.push({ stream, pattern, resolve }); check(); }),
    kill: (signal) => { p.kill(signal); },
    closeOutput: () => { p.stdout.destroy(); },
    done: new Promise((resolve) => { p.on("close", (code, signal) => resolve({ code, signal })); }),
  };
}

const stepwell = (args: string[], o?: { cwd?: string; env?: NodeJS.ProcessEnv }) => start(process.execPath, [launcher, ...args], o);

/** A 24 × 24 periodic two-layer basin: about a millisecond a step, so that thousands of steps are long enough to be stopped. */
const basin = {
  name: "process-basin", mesh: { type: "periodic-hex", cellsX: 24, cellsY: 24, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 60 }, duration: 600000, outputInterval: 600,
};
const basinFile = join(dir, "basin.json");
writeFileSync(basinFile, JSON.stringify(basin));

const noStackTrace = (s: string) => { expect(s).not.toMatch(/\n\s+at .*[:(]\d+/); expect(s).not.toMatch(/Error:|EPIPE/); };
const tmpFiles = (d: string) => readdirSync(d).filter((f) => f.endsWith(".tmp"));

describe("signals", () => {
  it("SIGINT during a run: exit 130, a valid JSON with status interrupted and the steps done, no temporary file", async () => {
    const out = join(dir, "sigint");
    mkdirSync(out);
    const file = join(out, "run.json");
    const c = stepwell(["run", basinFile, "--steps", "10000", "--json", file]);
    await c.waitFor("out", /\d+%\s+t = /); // the first progress line: the run is stepping
    // npm forwards a terminal's Ctrl-C to its child, which also gets it from the terminal: two at once are one request
    c.kill("SIGINT");
    const r = await c.done;
    // 128 + the signal's number is what a shell reports for a command ended by a signal (POSIX Shell Command
    // Language, "Exit Status for Commands"; SIGINT = 2, SIGTERM = 15 on Linux, signal(7))
    expect(r.code, c.err()).toBe(130);
    const j = JSON.parse(readFileSync(file, "utf8"));
    expect(j.status).toBe("interrupted");
    expect(j.interruptedBy).toBe("SIGINT");
    expect(j.steps).toBeGreaterThanOrEqual(10);
    expect(j.steps).toBeLessThan(10000);
    expect(j.simulatedSeconds).toBeCloseTo(j.steps * 60, 6);
    expect(c.out()).toMatch(/status\s+interrupted \(SIGINT\) after \d+ of 10000 steps/);
    expect(tmpFiles(out)).toEqual([]);
    noStackTrace(c.err());
  });

  it("SIGTERM during a sweep: exit 143 and the rows that finished, marked interrupted", async () => {
    const out = join(dir, "sigterm");
    mkdirSync(out);
    const file = join(out, "sweep.json");
    const csv = join(out, "sweep.csv");
    const c = stepwell(["sweep", basinFile, "--methods", "rk4", "--dts", "100,80,50,40", "--reference-dt", "20", "--duration", "40000", "--no-cache",
      "--json", file, "--csv", csv]);
    await c.waitFor("err", /sweep [3-9]\/\d+ runs/); // reference (2 runs) and at least one row finished
    c.kill("SIGTERM");
    const r = await c.done;
    expect(r.code, c.err()).toBe(143);
    const j = JSON.parse(readFileSync(file, "utf8"));
    expect([j.status, j.interruptedBy]).toEqual(["interrupted", "SIGTERM"]);
    expect(j.rows.length).toBeGreaterThanOrEqual(1);
    expect(j.rows.length).toBeLessThan(4);
    // with worker threads (the default --jobs) any of the runs may be among those finished: each row is its item's
    expect(j.items).toEqual([...j.items].sort((a: number, b: number) => a - b));
    expect(j.rows.map((row: { dt: number }) => row.dt)).toEqual(j.items.map((k: number) => [100, 80, 50, 40][k]));
    for (const row of j.rows) expect(row.status).not.toBe("cancelled");
    expect(readFileSync(csv, "utf8").trim().split("\n")).toHaveLength(1 + j.rows.length);
    expect(c.err()).toMatch(/stepwell sweep: interrupted \(SIGTERM\) with \d+ of 4 runs finished/);
    expect(tmpFiles(out)).toEqual([]);
    noStackTrace(c.err());
  });
});

describe("a reader that stops reading", () => {
  it("`run … | head -2`: the run stops quietly (exit 141, as SIGPIPE would) and still writes its JSON", async () => {
    const file = join(dir, "pipe-run.json");
    // progress lines come every 10%; the closed pipe is noticed at the next one (200 steps on)
    const c = stepwell(["run", basinFile, "--steps", "2000", "--json", file]);
    await c.waitFor("out", /\d+%\s+t = /);
    c.closeOutput();
    const r = await c.done;
    expect(r.code).toBe(141); // 128 + SIGPIPE (13), signal(7)
    expect(c.err()).toBe("");
    const j = JSON.parse(readFileSync(file, "utf8"));
    expect([j.status, j.interruptedBy]).toEqual(["interrupted", "closed-output"]);
    expect(j.steps).toBeLessThan(2000);
  });

  it("`scenarios | head -1` ends without a word on stderr", async () => {
    const c = stepwell(["scenarios"]);
    await c.waitFor("out", /\n/);
    c.closeOutput();
    const r = await c.done;
    expect([0, 141]).toContain(r.code);
    expect(c.err()).toBe("");
  });
});

describe("where relative paths are taken from", () => {
  // a folder inside the checkout (test-output/ is ignored by git), as a user's working folder
  const work = join(root, "test-output", `cli-cwd-${process.pid}`);
  mkdirSync(work, { recursive: true });
  writeFileSync(join(work, "mine.json"), JSON.stringify({ ...basin, name: "mine", mesh: { ...basin.mesh, cellsX: 12, cellsY: 12 } }));

  it("INIT_CWD from npm decides, not the package root npm moved to", async () => {
    const c = stepwell(["run", "./mine.json", "--steps", "2", "--json", "./from-init-cwd.json", "--quiet"],
      { cwd: root, env: { INIT_CWD: work, npm_package_json: join(root, "package.json") } });
    const r = await c.done;
    expect(r.code, c.err()).toBe(0);
    expect(JSON.parse(readFileSync(join(work, "from-init-cwd.json"), "utf8")).steps).toBe(2);
  });

  it("`npm run stepwell` from a subdirectory reads and writes there", async () => {
    const c = start("npm", ["run", "--silent", "stepwell", "--", "run", "./mine.json", "--steps", "2", "--json", "out-npm.json", "--quiet"], { cwd: work });
    const r = await c.done;
    expect(r.code, c.err()).toBe(0);
    expect(JSON.parse(readFileSync(join(work, "out-npm.json"), "utf8")).status).toBe("completed");
  });

  it("`npx stepwell` works from a subdirectory of the checkout", async () => {
    const c = start("npx", ["stepwell", "scenarios"], { cwd: work });
    const r = await c.done;
    expect(r.code, c.err()).toBe(0);
    expect(c.out()).toMatch(/^ring-wave\s/m);
    rmSync(work, { recursive: true, force: true });
  });
});

describe("shard jobs sharing one cache directory", () => {
  it("two slices started together both compute or read the reference, never half an entry; merge joins them", async () => {
    const cache = join(dir, "shared-cache");
    const args = ["sweep", join(dir, "small.json"), "--methods", "rk4,ssprk3", "--dts", "300,150", "--duration", "1200", "--reference-dt", "50"];
    writeFileSync(join(dir, "small.json"), JSON.stringify({ ...basin, name: "small", mesh: { ...basin.mesh, cellsX: 12, cellsY: 12 } }));
    const env = { STEPWELL_CACHE_DIR: cache };
    const jobs = [1, 2].map((i) => stepwell([...args, "--shard", `${i}/2`, "--json", join(dir, `shard-${i}.json`)], { env }));
    const results = await Promise.all(jobs.map((j) => j.done));
    for (const [i, r] of results.entries()) {
      expect(r.code, jobs[i].err()).toBe(0);
      expect(jobs[i].err()).not.toMatch(/warning/);
    }
    expect(readdirSync(cache).filter((f) => f.startsWith("reference-") && f.endsWith(".json"))).toHaveLength(1);
    expect(tmpFiles(cache)).toEqual([]);
    const m = stepwell(["merge", join(dir, "shard-1.json"), join(dir, "shard-2.json"), "--json", join(dir, "merged.json")], { env });
    expect((await m.done).code, m.err()).toBe(0);
    expect(JSON.parse(readFileSync(join(dir, "merged.json"), "utf8")).rows).toHaveLength(4);
  });
});

describe("a user's module saved outside an ES-module package (no package.json with \"type\": \"module\" above it)", () => {
  // Node reads .ts/.js there as CommonJS (Node.js documentation, "Determining module system"); a stepper module is
  // an ES module wherever it is saved, and so are the files it imports by relative path
  const plain = join(dir, "plain");
  mkdirSync(plain, { recursive: true });
  writeFileSync(join(plain, "helper.ts"), "export const scale = (dt: number): number => dt;\n");
  writeFileSync(join(plain, "euler.ts"), [
    'import type { StepperDefinition } from "a-package-that-is-not-there";',
    'import { scale } from "./helper.js";',
    "const euler: StepperDefinition = {",
    '  name: "outside-euler", order: 1, description: "forward Euler saved outside any package",',
    "  create(problem) {",
    "    const k: Float64Array = problem.newVector();",
    "    return {",
    "      step(x: Float64Array, t: number, dt: number): void {",
    "        problem.tendency(k, x, t);",
    '        if (t >= 40) throw new RangeError("deliberate fault");',
    "        for (let i = 0; i < problem.n; i++) x[i] += scale(dt) * k[i];",
    "      },",
    "    };",
    "  },",
    "};",
    "export default euler;",
  ].join("\n") + "\n");
  writeFileSync(join(plain, "euler.js"), 'export default { name: "outside-js", order: 1, description: "no-op", create() { return { step() {} }; } };\n');

  it("a .ts module with a relative import and a .js module run; a fault is located in the file, line and column", async () => {
    const ok = stepwell(["run", "ring-wave", "--stepper-module", join(plain, "euler.ts"), "--dt", "10", "--steps", "3", "--json", join(dir, "outside.json")]);
    expect((await ok.done).code, ok.err()).toBe(0);
    expect(JSON.parse(readFileSync(join(dir, "outside.json"), "utf8"))).toMatchObject({ status: "completed", method: "outside-euler", steps: 3 });
    const js = stepwell(["run", "ring-wave", "--stepper-module", join(plain, "euler.js"), "--dt", "10", "--steps", "2"]);
    expect((await js.done).code, js.err()).toBe(0);
    const fault = stepwell(["run", "ring-wave", "--stepper-module", join(plain, "euler.ts"), "--dt", "10", "--steps", "6"]);
    expect((await fault.done).code).toBe(2);
    expect(fault.err()).toMatch(/step at t = 40 s threw: RangeError: deliberate fault \(at .*euler\.ts:10:\d+\)/);
    expect(fault.err()).not.toMatch(/stepwell-module|CommonJS|require\(\)/);
  });

  it("unpack writes a sandbox export's code and a scenario naming it; run refuses the export itself with one line", async () => {
    const exported = join(plain, "exported.json");
    writeFileSync(exported, JSON.stringify({
      name: "exported", mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000 }, layers: [{ thickness: 500, density: 1025 }],
      physics: { f0: 1e-4 }, initial: { type: "bump", amplitude: 1, radius: 60000 }, stepper: { module: "editor:outside-euler", method: "user-module", dt: 10 }, duration: 30,
      stepperCode: { name: "outside-euler", language: "ts", source: readFileSync(join(plain, "euler.ts"), "utf8").replace('import { scale } from "./helper.js";', "const scale = (dt: number) => dt;") },
    }));
    const refused = stepwell(["run", exported]);
    expect((await refused.done).code).toBe(2);
    expect(refused.err().trim().split("\n")).toHaveLength(1);
    expect(refused.err()).toMatch(/stepper\.module: "editor:outside-euler" is code from the sandbox's code panel.*stepwell unpack/);
    const out = join(dir, "unpacked");
    const u = stepwell(["unpack", exported, "--out", out]);
    expect((await u.done).code, u.err()).toBe(0);
    expect(readdirSync(out).sort()).toEqual(["exported-unpacked.json", "outside-euler.ts"]);
    const again = stepwell(["unpack", exported, "--out", out]);
    expect((await again.done).code).toBe(2);
    expect(again.err()).toMatch(/--out: .*exists; choose another directory or add --force/);
    const r = stepwell(["run", join(out, "exported-unpacked.json"), "--json", join(dir, "unpacked-run.json")]);
    expect((await r.done).code, r.err()).toBe(0);
    expect(JSON.parse(readFileSync(join(dir, "unpacked-run.json"), "utf8"))).toMatchObject({ status: "completed", method: "outside-euler", steps: 3 });
  });
});
