import { writeFileSync } from "node:fs";
import { createRun } from "../../solver/driver/run";
import { seededRandom } from "../../solver/mesh/hexLattice";
import { modalRestriction } from "../../solver/model/restriction";
import { divergence, divergenceLoop, gradient, gradientLoop } from "../../solver/mesh/operators";
import { jacobianOperator } from "../../solver/model/jacobian";
import { restLinearOperator } from "../../solver/model/linear";
import { ShallowWaterModel } from "../../solver/model/shallowWater";
import { pvFlux, pvFluxLoop } from "../../solver/model/terms";
import { cpuClock, round, samples, summary, time } from "./harness";
import { compileNative } from "./native";
import { EXTRA_SECTIONS } from "./sections";

/**
 * `npm run bench [-- --json FILE] [-- --quick]`: tendency and restricted-operator cost per cell·layer beside our own
 * C loop over the same arrays, and RK4 step time, on periodic hexagonal meshes with 3 layers, plus the sections
 * registered in sections.ts (`--only-kernels` skips those; `--section KEY[,KEY…]` runs only those sections, without
 * the kernel table; `--wall` times the kernel table by the wall clock instead of CPU time). Sections read their own
 * flags from the arguments (see DEVELOPERS.md).
 */
const argv = process.argv.slice(2);
const jsonIdx = argv.indexOf("--json");
const jsonFile = jsonIdx >= 0 ? argv[jsonIdx + 1] : undefined;
if (jsonIdx >= 0 && !jsonFile) {
  process.stderr.write("bench: --json needs a file name\n");
  process.exit(2);
}
const quick = argv.includes("--quick");
/** The kernel table times CPU time of each process unless `--wall` (the machine is shared; see the table's note). */
const wall = argv.includes("--wall");
const log = (s: string) => process.stdout.write(s + "\n");
const sectionIdx = argv.indexOf("--section");
const sectionKeys = sectionIdx >= 0 ? (argv[sectionIdx + 1] ?? "").split(",").filter(Boolean) : null;
if (sectionKeys) {
  const unknown = sectionKeys.filter((k) => !EXTRA_SECTIONS.some((s) => s.key === k));
  if (!sectionKeys.length || unknown.length || argv.includes("--only-kernels")) {
    process.stderr.write(`bench: --section needs one or more of ${EXTRA_SECTIONS.map((s) => s.key).join(", ")} (comma-separated), and not --only-kernels` +
      `${unknown.length ? `; unknown: ${unknown.join(", ")}` : ""}\n`);
    process.exit(2);
  }
}

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
/** The kernel table (skipped by `--section`). */
function kernelTable(): void {
  const tendency: Record<string, unknown> = {};
  const rk4Step: Record<string, unknown> = {};
  const native = compileNative(3);
  log("Kernels, 3 layers, periodic hexagonal mesh: ns per cell·layer (a mode of the restricted operator and the single layer of");
  log("a barotropic sub-step count as one layer), best / median of repeats. Stepwell = the kernels as the solver runs them");
  log("(WebAssembly); TS loops = the TypeScript loops they replaced, kept as reference; C = our own plain C loop in the");
  log("repository, tests/bench/c/kernels.c, over the same connectivity and coefficient arrays exported from the mesh and model,");
  log("timed in a child process in rounds alternating with the others. Ratio = Stepwell / C; diff = max relative difference of");
  log(`the C result from Stepwell's. ${"unavailable" in native ? `C comparison skipped: ${native.unavailable}.` : `Compiled with ${native.compiler}.`}`);
  log(wall ? "Timed by the wall clock (--wall)." : "Timed by each process's CPU time (less disturbed by other work on a shared machine; --wall for the wall clock).");
  log("kernel                mesh      Stepwell (best / med.)   TS loops (best / med.)   C (best / med.)      ratio (best / med.)  diff");
  const fmt = (t: { best: number; median: number }) => `${t.best.toFixed(1).padStart(7)} / ${t.median.toFixed(1).padEnd(7)}`;
  type KernelName = "tendency" | "restricted" | "substep" | "rest" | "jacobian";
  for (const n of [64, 128]) {
    const run = createRun(benchScenario(n));
    const model = run.model;
    const reference = new ShallowWaterModel(model.mesh, model.params, "typescript");
    const m = run.mesh;
    const restriction = modalRestriction(model, 1), restrictionRef = modalRestriction(reference, 1);
    const rest = restLinearOperator(model), restRef = restLinearOperator(reference);
    const jac = jacobianOperator(model), jacRef = jacobianOperator(reference);
    jac.setState(run.state);
    jacRef.setState(run.state);
    const modal = Float64Array.from({ length: restriction.operator.n }, seededRandom(5));
    const restInput = Float64Array.from({ length: model.n }, seededRandom(7));
    const out = new Float64Array(model.n), outRest = new Float64Array(model.n), outJac = new Float64Array(model.n);
    const outModal = new Float64Array(restriction.operator.n);
    const nc = m.nCells, ne = m.nEdges;
    // the stencils of one barotropic sub-step of the split-explicit stepper: gradient, two PV fluxes, divergence
    const rnd = seededRandom(6);
    const bt = { cell: Float64Array.from({ length: nc }, rnd), edge: Float64Array.from({ length: ne }, rnd), pv: Float64Array.from({ length: ne }, rnd) };
    const outSub = new Float64Array(3 * ne + nc);
    const [grad, cor1, cor2] = [0, 1, 2].map((j) => outSub.subarray(j * ne, (j + 1) * ne));
    const div = outSub.subarray(3 * ne);
    const rounds = quick ? 2 : 5;
    const inner = n === 64 ? 20 : 5;
    const reps = quick ? 3 : 5;
    const kernels: Record<KernelName, { label: string; units: number; inner: number; fn: () => void; ref: () => void }> = {
      tendency: { label: "tendency", units: nc * 3, inner, fn: () => model.tendency(out, run.state, 0), ref: () => reference.tendency(out, run.state, 0) },
      restricted: { label: "restricted, 1 mode", units: nc, inner: 2 * inner, fn: () => restriction.operator.apply(outModal, modal), ref: () => restrictionRef.operator.apply(outModal, modal) },
      substep: {
        label: "barotropic sub-step", units: nc, inner: 2 * inner,
        fn: () => { gradient(grad, m, bt.cell); pvFlux(cor1, 0, m, bt.edge, bt.pv); pvFlux(cor2, 0, m, bt.edge, bt.pv); divergence(div, m, bt.edge); },
        ref: () => { gradientLoop(grad, m, bt.cell); pvFluxLoop(cor1, 0, m, bt.edge, bt.pv); pvFluxLoop(cor2, 0, m, bt.edge, bt.pv); divergenceLoop(div, m, bt.edge); },
      },
      rest: { label: "rest operator", units: nc * 3, inner, fn: () => rest.apply(outRest, restInput), ref: () => restRef.apply(outRest, restInput) },
      jacobian: { label: "Jacobian-vector", units: nc * 3, inner, fn: () => jac.apply(outJac, restInput), ref: () => jacRef.apply(outJac, restInput) },
    };
    const names = Object.keys(kernels) as KernelName[];
    const sw = Object.fromEntries(names.map((k) => [k, [] as number[]])) as Record<KernelName, number[]>;
    const ts = Object.fromEntries(names.map((k) => [k, [] as number[]])) as Record<KernelName, number[]>;
    const c = Object.fromEntries(names.map((k) => [k, [] as number[]])) as Record<KernelName, number[]>;
    const problem = "unavailable" in native ? null : native.load(model, restriction, run.state, modal, bt, rest, restInput);
    const diff: Partial<Record<KernelName, number>> = {};
    for (let r = 0; r < rounds; r++) {
      for (const k of names) {
        const o = { warmup: r === 0 ? 10 : 2, reps, inner: kernels[k].inner, ...(wall ? {} : { clock: cpuClock }) };
        sw[k].push(...samples(kernels[k].fn, o));
        ts[k].push(...samples(kernels[k].ref, o));
      }
      if (problem) {
        const cr = problem.run(reps, inner, !wall);
        for (const k of names) c[k].push(...cr[k].map((s) => s * 1e3));
        for (const k of names) kernels[k].fn();
        diff.tendency = relativeDifference(cr.outTendency, out);
        diff.restricted = relativeDifference(cr.outRestricted, outModal);
        diff.substep = relativeDifference(cr.outSubstep, outSub);
        diff.rest = relativeDifference(cr.outRest, outRest);
        diff.jacobian = relativeDifference(cr.outJacobian, outJac);
      }
    }
    const key = `${n}x${n}`;
    const row: Record<string, unknown> = {};
    for (const k of names) {
      const { units, label } = kernels[k];
      const perUnit = (ms: number[]) => summary(ms.map((t) => (t * 1e6) / units));
      const t = perUnit(sw[k]), tr = perUnit(ts[k]);
      const cc = c[k].length ? perUnit(c[k]) : null;
      row[k] = { nsPerCellLayer: { best: round(t.best), median: round(t.median) }, typescriptLoops: { best: round(tr.best), median: round(tr.median) },
        ...(cc ? { c: { best: round(cc.best), median: round(cc.median) }, ratio: { best: round(t.best / cc.best, 3), median: round(t.median / cc.median, 3) }, maxRelativeDifference: diff[k] } : {}) };
      log(`${label.padEnd(21)} ${key.padEnd(9)} ${fmt(t).padEnd(24)} ${fmt(tr).padEnd(24)} ${cc ? fmt(cc).padEnd(20) : "— (no C loop)".padEnd(20)} ` +
        `${cc ? `${(t.best / cc.best).toFixed(2).padStart(5)} / ${(t.median / cc.median).toFixed(2).padEnd(12)}` : "".padEnd(20)} ${cc ? diff[k]!.toExponential(1) : ""}`);
    }
    const s = time(() => run.stepper.step(run.state, 0, 60), { warmup: 3, reps: quick ? 3 : 9, inner: n === 64 ? 5 : 2, ...(wall ? {} : { clock: cpuClock }) });
    row.rk4Step = { ms: { best: round(s.best), median: round(s.median) } };
    tendency[key] = row;
    rk4Step[key] = { ms: { best: round(s.best), median: round(s.median) } };
    log(`${"RK4 step (ms)".padEnd(21)} ${key.padEnd(9)} ${s.best.toFixed(2).padStart(7)} / ${s.median.toFixed(2)}`);
  }
  if (!("unavailable" in native)) native.dispose();
  result.tendency = tendency;
  result.rk4Step = rk4Step;
}
if (!sectionKeys) kernelTable();

/** Largest |a − b| relative to the largest |b|. */
function relativeDifference(a: Float64Array, b: Float64Array): number {
  let d = 0, s = 0;
  for (let i = 0; i < b.length; i++) { d = Math.max(d, Math.abs(a[i] - b[i])); s = Math.max(s, Math.abs(b[i])); }
  return s > 0 ? d / s : d;
}

const chosen = argv.includes("--only-kernels") ? [] : sectionKeys ? EXTRA_SECTIONS.filter((s) => sectionKeys.includes(s.key)) : EXTRA_SECTIONS;
for (const [i, section] of chosen.entries()) {
  if (i > 0 || !sectionKeys) log("");
  try {
    result[section.key] = await section.run({ log, quick, argv });
  } catch (e) {
    log(`(section ${section.key} failed: ${(e as Error).message})`);
    result[section.key] = { error: (e as Error).message };
  }
}

if (jsonFile) {
  writeFileSync(jsonFile, JSON.stringify(result, null, 2) + "\n");
  log(`\nwrote ${jsonFile}`);
}
