import { writeFileSync } from "node:fs";
import { createRun } from "../../solver/driver/run";
import { seededRandom } from "../../solver/mesh/hexLattice";
import { modalRestriction } from "../../solver/model/restriction";
import { divergence, divergenceLoop, gradient, gradientLoop } from "../../solver/mesh/operators";
import { jacobianOperator } from "../../solver/model/jacobian";
import { restLinearOperator } from "../../solver/model/linear";
import { ShallowWaterModel } from "../../solver/model/shallowWater";
import { edgeThickness, potentialVorticity, pvFlux, pvFluxLoop } from "../../solver/model/terms";
import { problemFor } from "../../solver/model/problem";
import type { FastSlowSplit } from "../../solver/time/interface";
import { cpuClock, round, samples, summary, time } from "./harness";
import { compileNative } from "./native";
import { EXTRA_SECTIONS } from "./sections";

/**
 * `npm run bench [-- --json FILE] [-- --quick]`: tendency and restricted-operator cost per cell·layer beside our own
 * C loop over the same arrays, and RK4 step time, on periodic hexagonal meshes with 3 layers, plus the sections
 * registered in sections.ts (`--only-kernels` skips those; `--kernels rest,jacobian` times only those rows; `--meshes 32,64`
 * sets the kernel table's meshes; `--section KEY[,KEY…]` runs only those sections, without the kernel table; `--wall`
 * times the kernel table by the wall clock instead of CPU time). Sections read their own flags from the arguments
 * (see DEVELOPERS.md).
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
/** `--kernels rest,jacobian`: time only these rows of the kernel table (while iterating on one kernel). */
const kernelsIdx = argv.indexOf("--kernels");
/** `--meshes 32,64`: mesh sizes of the kernel table (default 64 and 128 cells a side). */
const meshesIdx = argv.indexOf("--meshes");
const meshSizes = meshesIdx >= 0 ? (argv[meshesIdx + 1] ?? "").split(",").map(Number).filter((v) => Number.isInteger(v) && v >= 4 && v <= 512) : [64, 128];
const onlyKernels = kernelsIdx >= 0 ? (argv[kernelsIdx + 1] ?? "").split(",").filter((s) => s !== "") : null;
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
  log("Barotropic sub-step = gradient, two PV fluxes and divergence (the mesh operators); split sub-step = one sub-step of the");
  log("split-explicit sub-cycle as the stepper runs it (the fast/slow split's kernels plus the stepper's TypeScript pointwise");
  log("updates; its TS loops column is the split without the fused kernels).");
  log(wall ? "Timed by the wall clock (--wall)." : "Timed by each process's CPU time (less disturbed by other work on a shared machine; --wall for the wall clock).");
  log("kernel                mesh      Stepwell (best / med.)   TS loops (best / med.)   C (best / med.)      ratio (best / med.)  diff");
  const fmt = (t: { best: number; median: number }) => `${t.best.toFixed(1).padStart(7)} / ${t.median.toFixed(1).padEnd(7)}`;
  type KernelName = "tendency" | "restricted" | "substep" | "split" | "rest" | "jacobian";
  for (const n of meshSizes) {
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
    const btCell = Float64Array.from({ length: nc }, rnd), btEdge = Float64Array.from({ length: ne }, rnd), btPv = Float64Array.from({ length: ne }, rnd);
    // one sub-step of the split-explicit sub-cycle as the stepper runs it, on the model's fast/slow split frozen at the
    // state; the C loop gets the same frozen Ĥ and q, computed here as problem.ts computes them
    const fs = problemFor(model).fastSlow;
    fs.freeze(run.state);
    const frozen = frozenColumn(model, run.state);
    const bt = { cell: btCell, edge: btEdge, pv: btPv, thickness: frozen.H, frozenPv: frozen.q, slow: Float64Array.from({ length: ne }, rnd) };
    const sp = splitSubstepLoop(fs, bt.slow);
    sp.reset(bt.edge, bt.cell);
    const fsRef = problemFor(reference).fastSlow; // the split's operators without the fused kernels
    fsRef.freeze(run.state);
    const spRef = splitSubstepLoop(fsRef, bt.slow);
    spRef.reset(bt.edge, bt.cell);
    const outSub = new Float64Array(3 * ne + nc);
    const [grad, cor1, cor2] = [0, 1, 2].map((j) => outSub.subarray(j * ne, (j + 1) * ne));
    const div = outSub.subarray(3 * ne);
    const rounds = quick ? 2 : 5;
    const inner = Math.max(5, Math.round((20 * 64 * 64) / (n * n)));
    const reps = quick ? 3 : 5;
    const kernels: Record<KernelName, { label: string; units: number; inner: number; fn: () => void; ref: () => void }> = {
      tendency: { label: "tendency", units: nc * 3, inner, fn: () => model.tendency(out, run.state, 0), ref: () => reference.tendency(out, run.state, 0) },
      restricted: { label: "restricted, 1 mode", units: nc, inner: 2 * inner, fn: () => restriction.operator.apply(outModal, modal), ref: () => restrictionRef.operator.apply(outModal, modal) },
      substep: {
        label: "barotropic sub-step", units: nc, inner: 2 * inner,
        fn: () => { gradient(grad, m, bt.cell); pvFlux(cor1, 0, m, bt.edge, bt.pv); pvFlux(cor2, 0, m, bt.edge, bt.pv); divergence(div, m, bt.edge); },
        ref: () => { gradientLoop(grad, m, bt.cell); pvFluxLoop(cor1, 0, m, bt.edge, bt.pv); pvFluxLoop(cor2, 0, m, bt.edge, bt.pv); divergenceLoop(div, m, bt.edge); },
      },
      split: { label: "split sub-step", units: nc, inner: 2 * inner, fn: () => sp.step(), ref: () => spRef.step() },
      rest: { label: "rest operator", units: nc * 3, inner, fn: () => rest.apply(outRest, restInput), ref: () => restRef.apply(outRest, restInput) },
      jacobian: { label: "Jacobian-vector", units: nc * 3, inner, fn: () => jac.apply(outJac, restInput), ref: () => jacRef.apply(outJac, restInput) },
    };
    const names = (Object.keys(kernels) as KernelName[]).filter((k) => !onlyKernels || onlyKernels.includes(k));
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
        sp.reset(bt.edge, bt.cell);
        sp.step();
        diff.split = relativeDifference(cr.outSplit, sp.output());
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

/** Ĥ = Σ_k ĥ_k and the edge PV f/Ĥ_v of a state, in the operations of the fast/slow split's freeze (problem.ts). */
function frozenColumn(model: ShallowWaterModel, x: Float64Array): { H: Float64Array; q: Float64Array } {
  const m = model.mesh, p = model.params, { nLayers: L, nCells: nc, nEdges: ne } = model.layout;
  const H = new Float64Array(ne), hE = new Float64Array(ne), eta = Float64Array.from(p.bottom), col = new Float64Array(nc);
  for (let k = 0; k < L; k++) {
    edgeThickness(hE, m, x, k * nc);
    for (let e = 0; e < ne; e++) H[e] += hE[e];
  }
  for (let k = 0; k < L; k++) for (let i = 0; i < nc; i++) eta[i] += x[k * nc + i];
  for (let i = 0; i < nc; i++) col[i] = eta[i] - p.bottom[i];
  const q = new Float64Array(ne);
  potentialVorticity(new Float64Array(m.nVertices), q, m, new Float64Array(m.nVertices), col, 0, p.coriolisVertex);
  return { H, q };
}

/**
 * One sub-step of the split-explicit barotropic sub-cycle with the loops of solver/time/splitExplicit.ts (sub-step
 * τ = 1 s, averaging weights a = 0.1, b = 0.05, as the C loop): pressure, Coriolis, predictor, Coriolis, corrector
 * with the running sums, surface tendency, η update and its running sum.
 */
function splitSubstepLoop(fs: FastSlowSplit, slow: Float64Array) {
  const ne = fs.nEdges, nc = fs.nCells, tau = 1, a = 0.1, b = 0.05;
  const [ub, ubFlux, ubEnd, press, cor1, cor2, base, ubPred] = Array.from({ length: 8 }, () => fs.newEdgeVector());
  const [eta, etaEnd, dEta] = Array.from({ length: 3 }, () => fs.newCellVector());
  return {
    reset(u0: Float64Array, eta0: Float64Array) { ub.set(u0); eta.set(eta0); ubFlux.fill(0); ubEnd.fill(0); etaEnd.fill(0); },
    step() {
      fs.pressure(press, eta);
      fs.coriolis(cor1, ub);
      for (let e = 0; e < ne; e++) {
        const be = slow[e] + press[e];
        base[e] = be;
        ubPred[e] = ub[e] + tau * (be + cor1[e]);
      }
      fs.coriolis(cor2, ubPred);
      for (let e = 0; e < ne; e++) {
        const u = ub[e] + tau * (base[e] + 0.5 * (cor1[e] + cor2[e]));
        ub[e] = u;
        ubFlux[e] += b * u;
        ubEnd[e] += a * u;
      }
      fs.surfaceTendency(dEta, ub);
      for (let i = 0; i < nc; i++) etaEnd[i] += a * (eta[i] + 0.5 * tau * dEta[i]);
      for (let i = 0; i < nc; i++) eta[i] += tau * dEta[i];
    },
    output(): Float64Array {
      const o = new Float64Array(3 * ne + 2 * nc);
      o.set(ub); o.set(ubFlux, ne); o.set(ubEnd, 2 * ne); o.set(eta, 3 * ne); o.set(etaEnd, 3 * ne + nc);
      return o;
    },
  };
}

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
