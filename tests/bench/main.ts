import { writeFileSync } from "node:fs";
import { createRun } from "../../solver/driver/run";
import { seededRandom } from "../../solver/mesh/hexLattice";
import { modalRestriction } from "../../solver/model/restriction";
import { divergence, gradient } from "../../solver/mesh/operators";
import { pvFlux } from "../../solver/model/terms";
import { round, samples, summary, time } from "./harness";
import { compileNative } from "./native";
import { EXTRA_SECTIONS } from "./sections";

/**
 * `npm run bench [-- --json FILE] [-- --quick]`: tendency and restricted-operator cost per cell·layer beside our own
 * C loop over the same arrays, and RK4 step time, on periodic hexagonal meshes with 3 layers, plus the sections
 * registered in sections.ts (`--only-kernels` skips those).
 */
const argv = process.argv.slice(2);
const jsonIdx = argv.indexOf("--json");
const jsonFile = jsonIdx >= 0 ? argv[jsonIdx + 1] : undefined;
if (jsonIdx >= 0 && !jsonFile) {
  process.stderr.write("bench: --json needs a file name\n");
  process.exit(2);
}
const quick = argv.includes("--quick");
const log = (s: string) => process.stdout.write(s + "\n");

export function benchScenario(n: number) {
  return {
    name: `bench-${n}`,
    mesh: { type: "periodic-hex", cellsX: n, cellsY: n, spacing: 20000 },
    layers: [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.5 }, { thickness: 3000, density: 1027.5 }],
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
    initial: { type: "bump", amplitude: 1, radius: 100000 },
    stepper: { method: "rk4", dt: 60 },
    duration: 3600,
  };
}

const result: Record<string, unknown> = { machine: { cores: (await import("node:os")).cpus().length, node: process.version } };
const tendency: Record<string, unknown> = {};
const rk4Step: Record<string, unknown> = {};
const native = compileNative(3);
log("Kernels against a plain C loop, 3 layers, periodic hexagonal mesh: ns per cell·layer (a mode of the restricted");
log("operator and the barotropic layer of a sub-step count as one layer), best / median of repeats. C figure: our own loop in the repository, tests/bench/c/kernels.c,");
log("over the same connectivity and coefficient arrays exported from the mesh and model, timed in a child process in");
log(`rounds alternating with the Stepwell kernel. ${"unavailable" in native ? `C comparison skipped: ${native.unavailable}.` : `Compiled with ${native.compiler}.`}`);
log("kernel                 mesh       Stepwell (best / median)     C (best / median)    ratio (best / median)   max rel. diff");
const fmt = (t: { best: number; median: number }) => `${t.best.toFixed(1).padStart(7)} / ${t.median.toFixed(1).padEnd(7)}`;
for (const n of [64, 128]) {
  const run = createRun(benchScenario(n));
  const model = run.model;
  const m = run.mesh;
  const restriction = modalRestriction(model, 1);
  const modal = Float64Array.from({ length: restriction.operator.n }, seededRandom(5));
  const out = new Float64Array(model.n);
  const outModal = new Float64Array(restriction.operator.n);
  const nc = m.nCells, ne = m.nEdges;
  // the stencils of one barotropic sub-step of the split-explicit stepper: gradient, two PV fluxes, divergence
  const rnd = seededRandom(6);
  const bt = { cell: Float64Array.from({ length: nc }, rnd), edge: Float64Array.from({ length: ne }, rnd), pv: Float64Array.from({ length: ne }, rnd) };
  const outSub = new Float64Array(3 * ne + nc);
  const [grad, cor1, cor2] = [0, 1, 2].map((j) => outSub.subarray(j * ne, (j + 1) * ne));
  const div = outSub.subarray(3 * ne);
  const substep = () => {
    gradient(grad, m, bt.cell);
    pvFlux(cor1, 0, m, bt.edge, bt.pv);
    pvFlux(cor2, 0, m, bt.edge, bt.pv);
    divergence(div, m, bt.edge);
  };
  const rounds = quick ? 2 : 5;
  const inner = n === 64 ? 20 : 5;
  const reps = quick ? 3 : 5;
  const kernels = {
    tendency: { label: "tendency", units: nc * 3, inner, fn: () => model.tendency(out, run.state, 0), out },
    restricted: { label: "restricted, 1 mode", units: nc, inner: 2 * inner, fn: () => restriction.operator.apply(outModal, modal), out: outModal },
    substep: { label: "barotropic sub-step", units: nc, inner: 2 * inner, fn: substep, out: outSub },
  } as const;
  const names = Object.keys(kernels) as (keyof typeof kernels)[];
  const ts = { tendency: [] as number[], restricted: [] as number[], substep: [] as number[] };
  const c = { tendency: [] as number[], restricted: [] as number[], substep: [] as number[] };
  const problem = "unavailable" in native ? null : native.load(model, restriction, run.state, modal, bt);
  const diff = { tendency: NaN, restricted: NaN, substep: NaN };
  for (let r = 0; r < rounds; r++) {
    for (const k of names) ts[k].push(...samples(kernels[k].fn, { warmup: r === 0 ? 20 : 2, reps, inner: kernels[k].inner }));
    if (problem) {
      const cr = problem.run(reps, inner);
      for (const k of names) c[k].push(...cr[k].map((s) => s * 1e3));
      diff.tendency = relativeDifference(cr.outTendency, out);
      diff.restricted = relativeDifference(cr.outRestricted, outModal);
      diff.substep = relativeDifference(cr.outSubstep, outSub);
    }
  }
  const key = `${n}x${n}`;
  const row: Record<string, unknown> = {};
  for (const k of names) {
    const { units, label } = kernels[k];
    const t = summary(ts[k].map((ms) => (ms * 1e6) / units));
    const cc = problem ? summary(c[k].map((ms) => (ms * 1e6) / units)) : null;
    row[k] = { nsPerCellLayer: { best: round(t.best), median: round(t.median) },
      ...(cc ? { c: { best: round(cc.best), median: round(cc.median) }, ratio: { best: round(t.best / cc.best, 3), median: round(t.median / cc.median, 3) }, maxRelativeDifference: diff[k] } : {}) };
    log(`${label.padEnd(22)} ${key.padEnd(10)} ${fmt(t).padEnd(28)} ${cc ? fmt(cc).padEnd(20) : "—".padEnd(20)} ` +
      `${cc ? `${(t.best / cc.best).toFixed(2).padStart(6)} / ${(t.median / cc.median).toFixed(2).padEnd(13)}` : "—".padEnd(22)} ${cc ? diff[k].toExponential(1) : ""}`);
  }
  const s = time(() => run.stepper.step(run.state, 0, 60), { warmup: 3, reps: quick ? 3 : 9, inner: n === 64 ? 5 : 2 });
  row.rk4Step = { ms: { best: round(s.best), median: round(s.median) } };
  tendency[key] = row;
  rk4Step[key] = { ms: { best: round(s.best), median: round(s.median) } };
  log(`${"RK4 step (ms)".padEnd(22)} ${key.padEnd(10)} ${s.best.toFixed(2).padStart(7)} / ${s.median.toFixed(2)}`);
}
if (!("unavailable" in native)) native.dispose();
result.tendency = tendency;
result.rk4Step = rk4Step;

/** Largest |a − b| relative to the largest |b|. */
function relativeDifference(a: Float64Array, b: Float64Array): number {
  let d = 0, s = 0;
  for (let i = 0; i < b.length; i++) { d = Math.max(d, Math.abs(a[i] - b[i])); s = Math.max(s, Math.abs(b[i])); }
  return s > 0 ? d / s : d;
}

for (const section of argv.includes("--only-kernels") ? [] : EXTRA_SECTIONS) {
  log("");
  try {
    result[section.key] = await section.run({ log, quick });
  } catch (e) {
    log(`(section ${section.key} failed: ${(e as Error).message})`);
    result[section.key] = { error: (e as Error).message };
  }
}

if (jsonFile) {
  writeFileSync(jsonFile, JSON.stringify(result, null, 2) + "\n");
  log(`\nwrote ${jsonFile}`);
}
