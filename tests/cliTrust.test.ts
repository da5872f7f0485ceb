import { describe, expect, it } from "vitest";
import { cpSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, statSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { fileURLToPath } from "node:url";
import { main } from "../solver/cli/main";
import type { CliContext, StopReason } from "../solver/cli/context";
import { writeFileAtomic } from "../solver/cli/io";
import { resolvePathsInFile, startDirectory } from "../solver/cli/paths";
import { sourceHash } from "../solver/cli/solverIdentity";
import { readSteppersFile } from "../solver/cli/studyArgs";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";
import { MemoryReferenceCache, planReference, referenceKey, runSweep, stabilityStudy, StudyInterrupted, type InterruptedSweep, type StabilityResult } from "../solver/studies";

const dir = mkdtempSync(join(tmpdir(), "stepwell-trust-"));
process.env.STEPWELL_CACHE_DIR = join(dir, "cache");

/** Run the CLI in-process and capture what it prints; `stopAfter` polls of the stop flag, it answers `reason`. */
async function cli(argv: string[], stopAfter = Infinity, reason: StopReason = "SIGINT"): Promise<{ code: number; out: string; err: string }> {
  let out = "";
  let err = "";
  let polls = 0;
  const ctx: CliContext = { stopReason: () => (++polls > stopAfter ? reason : null) };
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; }, ctx);
  return { code, out, err };
}

const tmpFiles = (d: string) => readdirSync(d).filter((f) => f.endsWith(".tmp"));

/** A smooth two-layer problem on a small rotating periodic mesh (quick to step). */
const smooth = {
  name: "trust-bump", mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 60 }, duration: 3000, outputInterval: 600,
};
const smoothFile = join(dir, "smooth.json");
writeFileSync(smoothFile, JSON.stringify(smooth));

describe("interrupted runs and studies write what finished", () => {
  it("run: a stop request gives exit 130 and a JSON with status interrupted and the steps done", async () => {
    const file = join(dir, "run.json");
    const r = await cli(["run", smoothFile, "--steps", "400", "--json", file, "--quiet"], 25);
    expect(r.code).toBe(130); // 128 + SIGINT (2): what a shell reports for a process ended by Ctrl-C (common practice, no source)
    const j = JSON.parse(readFileSync(file, "utf8"));
    expect(j.status).toBe("interrupted");
    expect(j.interruptedBy).toBe("SIGINT");
    expect(j.steps).toBe(26); // polled after every step: the 26th poll, after step 26, says stop
    expect(j.plannedSteps).toBe(400);
    expect(j.simulatedSeconds).toBeCloseTo(26 * 60, 9);
    expect(tmpFiles(dir)).toEqual([]);
  });

  it("run: SIGTERM gives 143 and a closed output 141", async () => {
    expect((await cli(["run", smoothFile, "--steps", "50", "--quiet"], 3, "SIGTERM")).code).toBe(143); // 128 + 15
    expect((await cli(["run", smoothFile, "--steps", "50", "--quiet"], 3, "closed-output")).code).toBe(141); // 128 + SIGPIPE (13)
  });

  it("stability: a stop keeps the searches that finished and drops the one cut short", () => {
    const built = buildScenario(parseScenario(smooth));
    const configs = [{ method: "rk4" }, { method: "ssprk3" }];
    const o = { duration: 1200, tolerance: 0.1 };
    const full = stabilityStudy(built, configs, o);
    // let the first search finish, then stop during the second
    let polls = 0;
    let pollsFirst = 0;
    stabilityStudy(built, [configs[0]], o, { shouldCancel: () => { pollsFirst++; return false; } });
    try {
      stabilityStudy(built, configs, o, { shouldCancel: () => ++polls > pollsFirst + 40 });
      expect.unreachable("the study should have stopped");
    } catch (e) {
      expect(e).toBeInstanceOf(StudyInterrupted);
      const s = e as StudyInterrupted<StabilityResult[]>;
      expect(s.partial).toHaveLength(1);
      expect(s.partial[0]).toEqual(full[0]); // the finished search is exactly the uninterrupted one
      expect([s.done, s.total]).toEqual([1, 2]);
    }
  });

  it("sweep: a stop keeps the rows that finished, identical to the uninterrupted rows", () => {
    const built = buildScenario(parseScenario(smooth));
    const def = { steppers: [{ method: "rk4" }], dts: [300, 150, 100], duration: 1200, referenceDt: 50 };
    const full = runSweep(built, def, { cache: new MemoryReferenceCache() });
    // polls: one before each run and one per step — reference 1 + 24, its check 1 + 12, rows 1 + 4 and 1 + 8 — then stop inside the third row
    const beforeThirdRow = 1 + 24 + 1 + 12 + 1 + 4 + 1 + 8;
    let polls = 0;
    try {
      runSweep(built, def, { cache: new MemoryReferenceCache(), shouldCancel: () => ++polls > beforeThirdRow + 3 });
      expect.unreachable("the sweep should have stopped");
    } catch (e) {
      expect(e).toBeInstanceOf(StudyInterrupted);
      const p = (e as StudyInterrupted<InterruptedSweep>).partial;
      expect(p.status).toBe("interrupted");
      expect(p.items).toEqual([0, 1]);
      const mask = (r: object) => ({ ...r, wallSeconds: 0 });
      expect(p.rows.map(mask)).toEqual(full.rows.slice(0, 2).map(mask));
      expect(p.reference).toEqual(full.reference);
    }
  });

  it("an interrupted shard is refused by merge", async () => {
    const part = join(dir, "cut-part.json");
    const before = process.env.STEPWELL_CACHE_DIR;
    process.env.STEPWELL_CACHE_DIR = join(dir, "cache-shard"); // a fresh cache: the reference is computed, so the polls below count its steps
    const beforeSecondRow = 1 + 24 + 1 + 12 + 1 + 4;
    const r = await cli(["sweep", smoothFile, "--methods", "rk4", "--dts", "300,150", "--duration", "1200", "--reference-dt", "50",
      "--shard", "1/1", "--json", part], beforeSecondRow + 2, "SIGTERM");
    process.env.STEPWELL_CACHE_DIR = before;
    expect(r.code).toBe(143);
    const j = JSON.parse(readFileSync(part, "utf8"));
    expect([j.status, j.interruptedBy, j.rows.length]).toEqual(["interrupted", "SIGTERM", 1]);
    const m = await cli(["merge", part, "--json", join(dir, "merged.json")]);
    expect(m.code).toBe(2);
    expect(m.err).toMatch(/PARTS: part 1 \(slice 1\/1\) was interrupted after 1 of its work items; run that slice again/);
  });
});

describe("a sweep says when it changes what was asked for", () => {
  it("a Δt longer than the duration is clamped with a warning on stderr and in the JSON", async () => {
    const file = join(dir, "clamped.json");
    const r = await cli(["sweep", smoothFile, "--methods", "rk4", "--dts", "5000,300", "--duration", "1200", "--reference-dt", "50", "--no-cache", "--json", file]);
    expect(r.code, r.err).toBe(0);
    const warning = "--dts: 5000 s is longer than the duration (1200 s); it runs as one step of 1200 s";
    expect(r.err.split("\n").filter((l) => l.includes("warning"))).toEqual([`stepwell sweep: warning: ${warning}`]);
    const j = JSON.parse(readFileSync(file, "utf8"));
    expect(j.warnings).toEqual([warning]);
    expect(j.rows[0].dt).toBe(1200);
  });

  it("a Δt rounded by more than 1% to end at the duration, and a reference Δt changed, are reported", async () => {
    const file = join(dir, "rounded.json");
    const r = await cli(["sweep", smoothFile, "--methods", "rk4", "--dts", "500,300", "--duration", "1200", "--reference-dt", "70", "--no-cache", "--json", file]);
    expect(r.code, r.err).toBe(0);
    const j = JSON.parse(readFileSync(file, "utf8"));
    // 1200 / 500 = 2.4 → 2 steps of 600 s; 1200 / (2·70) → 9 pairs, 18 steps of 66.67 s
    expect(j.warnings).toEqual([
      "--dts: Δt changed by more than 1% to end exactly at the duration (1200 s): 500 s → 600 s (2 steps)",
      "--reference-dt: 70 s changed to 66.67 s (18 steps, an even number ending exactly at the duration 1200 s)",
    ]);
    expect(r.err).toMatch(/warning: --dts: Δt changed/);
  });

  it("a Δt list that divides the duration gives no warning", async () => {
    const file = join(dir, "exact.json");
    const r = await cli(["sweep", smoothFile, "--methods", "rk4", "--dts", "300,150", "--duration", "1200", "--no-cache", "--json", file]);
    expect(r.code, r.err).toBe(0);
    expect(r.err).not.toMatch(/warning/);
    expect(JSON.parse(readFileSync(file, "utf8")).warnings).toEqual([]);
  });
});

describe("reference cache entries are used only when intact and written by this solver", () => {
  const sweep = (json: string) => ["sweep", smoothFile, "--methods", "rk4", "--dts", "300,150", "--duration", "1200", "--reference-dt", "50", "--json", json];
  const cacheDir = join(dir, "cache");
  const entry = () => {
    const files = readdirSync(cacheDir).filter((f) => f.startsWith("reference-"));
    expect(files).toHaveLength(1);
    return join(cacheDir, files[0]);
  };
  const noWall = (file: string) => JSON.stringify(JSON.parse(readFileSync(file, "utf8")), (k, v) => (k === "wallSeconds" ? 0 : v));

  it("an intact entry is read back without a warning and not rewritten", async () => {
    const a = await cli(sweep(join(dir, "c0.json")));
    expect(a.code, a.err).toBe(0);
    const file = entry();
    const before = statSync(file).mtimeMs;
    const b = await cli(sweep(join(dir, "c1.json")));
    expect(b.err).not.toMatch(/warning/);
    expect(statSync(file).mtimeMs).toBe(before);
    expect(noWall(join(dir, "c1.json"))).toBe(noWall(join(dir, "c0.json")));
    expect(tmpFiles(cacheDir)).toEqual([]);
  });

  const damage: [string, (text: string) => string, RegExp][] = [
    ["one value of the stored state edited", (t) => {
      const j = JSON.parse(t);
      const i = 40; // a character inside the base64 state: flip it to another base64 letter
      j.state = j.state.slice(0, i) + (j.state[i] === "A" ? "B" : "A") + j.state.slice(i + 1);
      return JSON.stringify(j);
    }, /does not match its checksum \(edited or damaged\)/],
    ["the error floor edited", (t) => { const j = JSON.parse(t); j.floor.thickness *= 0.5; return JSON.stringify(j); }, /does not match its checksum/],
    ["truncated", (t) => t.slice(0, Math.floor(t.length / 2)), /is truncated or not JSON/],
    ["written by another version", (t) => JSON.stringify({ ...JSON.parse(t), solver: "stepwell 0.0.1 solver 0123456789abcdef" }), /was written by stepwell 0\.0\.1 solver 0123456789abcdef, this is stepwell /],
  ];
  for (const [what, edit, message] of damage) {
    it(`an entry ${what} is recomputed with one warning line`, async () => {
      const file = entry();
      writeFileSync(file, edit(readFileSync(file, "utf8")));
      const r = await cli(sweep(join(dir, "c2.json")));
      expect(r.code, r.err).toBe(0);
      const warnings = r.err.split("\n").filter((l) => l.includes("warning"));
      expect(warnings).toHaveLength(1);
      expect(warnings[0]).toMatch(/^stepwell sweep: warning: reference cache: .*reference-[0-9a-f]+\.json /);
      expect(warnings[0]).toMatch(message);
      expect(warnings[0]).toMatch(/; recomputing it$/);
      expect(noWall(join(dir, "c2.json"))).toBe(noWall(join(dir, "c0.json"))); // recomputed, same result
      const again = await cli(sweep(join(dir, "c3.json"))); // the recomputed entry replaced the bad one
      expect(again.err).not.toMatch(/warning/);
    });
  }

  it("the cache key changes with the solver identity", () => {
    const built = buildScenario(parseScenario(smooth));
    const plan = planReference({ method: "rk4" }, 50, 1200);
    expect(referenceKey(built, plan, "stepwell 0.1.0 solver aaaa")).not.toBe(referenceKey(built, plan, "stepwell 0.1.0 solver aaab"));
    expect(referenceKey(built, plan, "stepwell 0.1.0 solver aaaa")).not.toBe(referenceKey(built, plan, "stepwell 0.1.1 solver aaaa"));
  });

  it("the source hash changes with any solver file but not with the command line's", () => {
    const src = join(dir, "src-copy");
    mkdirSync(join(src, "cli"), { recursive: true });
    mkdirSync(join(src, "time"), { recursive: true });
    writeFileSync(join(src, "errors.ts"), "export const a = 1;\n");
    writeFileSync(join(src, "time", "rk.ts"), "export const b = 2;\n");
    writeFileSync(join(src, "cli", "main.ts"), "export const c = 3;\n");
    const h0 = sourceHash(src);
    writeFileSync(join(src, "cli", "main.ts"), "export const c = 4;\n");
    expect(sourceHash(src)).toBe(h0);
    writeFileSync(join(src, "time", "rk.ts"), "export const b = 3;\n");
    const h1 = sourceHash(src);
    expect(h1).not.toBe(h0);
    writeFileSync(join(src, "time", "new.ts"), "");
    expect(sourceHash(src)).not.toBe(h1);
    // the hash does not depend on where the checkout lies
    const copy = join(dir, "solver-copy");
    cpSync(fileURLToPath(new URL("../solver", import.meta.url)), copy, { recursive: true });
    expect(sourceHash(copy)).toBe(sourceHash(fileURLToPath(new URL("../solver", import.meta.url))));
  });
});

describe("paths and files", () => {
  it("writeFileAtomic leaves the whole new file or, on failure, the old state and no temporary file", () => {
    const d = join(dir, "atomic");
    const f = join(d, "out.json");
    writeFileAtomic(f, "first\n");
    writeFileAtomic(f, "second\n");
    expect(readFileSync(f, "utf8")).toBe("second\n");
    mkdirSync(join(d, "taken"));
    expect(() => writeFileAtomic(join(d, "taken"), "x")).toThrow(); // cannot rename a file over a directory
    expect(tmpFiles(d)).toEqual([]);
  });

  it("INIT_CWD is the start directory only while the process stands where npm moved it", () => {
    const env = { INIT_CWD: "/home/me/project/data", npm_package_json: "/home/me/project/package.json" };
    expect(startDirectory(env, "/home/me/project")).toBe("/home/me/project/data");
    expect(startDirectory(env, "/home/me/elsewhere")).toBe("/home/me/elsewhere"); // an outer script changed directory
    expect(startDirectory({}, "/home/me/project")).toBe("/home/me/project");
  });

  it("a relative module path in a --steppers file resolves from the file's directory", () => {
    const d = join(dir, "steppers-dir");
    mkdirSync(d, { recursive: true });
    const file = join(d, "steppers.json");
    writeFileSync(file, JSON.stringify([{ method: "rk4", module: "./mine.mjs" }, { method: "rk4", module: "lib/other.ts", label: "b" }, { method: "ssprk3", module: "some-package" }]));
    // readSteppersFile then looks each module up among the loaded ones (tests/userModules.test.ts runs that path)
    const s = resolvePathsInFile(JSON.parse(readFileSync(file, "utf8")) as { module: string }[], file);
    expect(s.map((x) => x.module)).toEqual([join(d, "mine.mjs"), join(d, "lib", "other.ts"), "some-package"]);
    expect(() => readSteppersFile(file)).toThrow(/--steppers\[0\]\.module: stepper module file not found/);
    expect(resolvePathsInFile({ stepper: { module: "../up.ts" } }, file)).toEqual({ stepper: { module: join(dir, "up.ts") } });
  });
});
