import { createRun } from "../../solver/driver/run";
import { execute } from "../../solver/driver/execute";
import { createPhiAction } from "../../solver/linalg/registry";
import type { PhiBackendName } from "../../solver/linalg/types";
import { seededRandom } from "../../solver/mesh/hexLattice";
import { restLinearOperator } from "../../solver/model/linear";
import { modalRestriction } from "../../solver/model/restriction";
import { builtinScenario } from "../../solver/scenario/builtins";
import { methodNames } from "../../solver/time/registry";
import { round, time } from "./harness";
import type { BenchSection } from "./sections";

const THREE_LAYERS = [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.5 }, { thickness: 3000, density: 1027.5 }];

function periodic(n: number, layers: unknown[]) {
  return {
    name: "bench", mesh: { type: "periodic-hex", cellsX: n, cellsY: n, spacing: 20000 }, layers,
    physics: { f0: 1e-4 }, initial: { type: "bump", amplitude: 1, radius: 100000 }, stepper: { method: "rk4", dt: 60 }, duration: 3600,
  };
}

/** Matvec time of the full rest-state operator and of its barotropic and two-mode restrictions (128×128, 3 layers). */
export const operatorSection: BenchSection = {
  key: "linearOperator",
  run({ log, quick }) {
    const run = createRun(periodic(128, THREE_LAYERS));
    const rest = restLinearOperator(run.model);
    const x = Float64Array.from({ length: rest.n }, seededRandom(3));
    const y = new Float64Array(rest.n);
    const full = time(() => rest.apply(y, x), { reps: quick ? 3 : 9, inner: 5 });
    const out: Record<string, unknown> = { full: { ms: { best: round(full.best), median: round(full.median) } } };
    log("Linear rest-state operator, 128×128 periodic, 3 layers: one matvec");
    log(`  full (3 layers)           ${full.best.toFixed(3)} ms (best)  ${full.median.toFixed(3)} ms (median)`);
    for (const m of [1, 2]) {
      const r = modalRestriction(run.model, m, rest);
      const xm = Float64Array.from({ length: r.operator.n }, seededRandom(4));
      const ym = new Float64Array(r.operator.n);
      const t = time(() => r.operator.apply(ym, xm), { reps: quick ? 3 : 9, inner: 5 });
      out[`modes${m}`] = { ms: { best: round(t.best), median: round(t.median) }, ratioToFull: round(t.best / full.best, 3) };
      log(`  restricted to ${m} mode${m > 1 ? "s" : " "}     ${t.best.toFixed(3)} ms (best)  ${t.median.toFixed(3)} ms (median)  = ${(t.best / full.best).toFixed(2)} × full`);
    }
    // the shifted solves of the implicit steppers on the main demo basin: their cost as counted (multiply-adds of the
    // substitutions over those of one product) and as timed (a solve's time over a product's)
    const demo = createRun(builtinScenario("shelf-gyre-basin"));
    const solves: Record<string, unknown> = {};
    log(`Shifted solves (I − γK) y = c on the main demo basin (${demo.mesh.nCells} cells, ${demo.mesh.nEdges} edges, 3 layers), γ = 1000 s, after the factorization:`);
    for (const linear of ["modes:1", "modes:2", "rest"]) {
      const K = linear === "rest" ? restLinearOperator(demo.model) : modalRestriction(demo.model, Number(linear.slice(6)));
      const op = "operator" in K ? K.operator : K;
      const solver = K.shiftedSolver();
      const x = Float64Array.from({ length: op.n }, seededRandom(8)), y = new Float64Array(op.n);
      solver.solve(y, x, 1000);
      const ts = time(() => solver.solve(y, x, 1000), { warmup: 2, reps: quick ? 3 : 7, inner: 3 });
      const tm = time(() => op.apply(y, x), { warmup: 5, reps: quick ? 3 : 7, inner: 20 });
      const st = solver.stats;
      const timed = ts.best / tm.best;
      solves[linear] = { unknowns: st.unknowns, fill: st.fill, msPerSolve: { best: round(ts.best), median: round(ts.median) }, msPerMatvec: round(tm.best), matvecsCounted: round(st.matvecsPerSolve, 3), matvecsTimed: round(timed, 3) };
      log(`  ${linear.padEnd(8)} ${String(st.unknowns).padStart(6)} unknowns, fill ${String(st.fill).padStart(8)}: ${ts.best.toFixed(2)} ms per solve (median ${ts.median.toFixed(2)}), ` +
        `= ${st.matvecsPerSolve.toFixed(1)} matvecs as counted, ${timed.toFixed(1)} as timed (one matvec ${tm.best.toFixed(3)} ms)`);
    }
    out.shiftedSolves = solves;
    return out;
  },
};

/** Memory bound of the rational rows' pole factorizations, in real numbers of the lower factors (16 bytes each with U). */
const RATIONAL_FILL = 2.5e8;

/**
 * φ-action time and matvecs per backend on the single-layer rotating wave operator, 128×128 periodic, 4000 m
 * deep, f = 1e-4 1/s, at hρ = 2√2 (the RK4 limit), 10, 100, 300; tolerance 1e-8, φ_0…φ_2 combination. The rational
 * rows add the set-up of their pole factorizations (timed once: minutes) and are refused above RATIONAL_FILL.
 */
export const phiSection: BenchSection = {
  key: "phiAction",
  run({ log, quick }) {
    const run = createRun({ ...periodic(128, [{ thickness: 4000, density: 1025 }]), initial: { type: "rest" } });
    // the steppers hand the backends the operator in interface variables, where the energy weights are diagonal
    const op = restLinearOperator(run.model).interfaceForm;
    const rho = op.spectralBound!;
    const rnd = seededRandom(9);
    const v = [0, 1, 2].map(() => Float64Array.from({ length: op.n }, () => 2 * rnd() - 1));
    v[0].fill(0); // increment form, as the steppers call it
    const out = new Float64Array(op.n);
    const ref = new Float64Array(op.n);
    const w = op.weights!;
    const enorm = (a: Float64Array, b?: Float64Array) => { let s2 = 0; for (let q = 0; q < a.length; q++) s2 += w[q] * (a[q] - (b ? b[q] : 0)) ** 2; return Math.sqrt(s2); };
    const rows: { backend: string; hRho: number; ms: number; matvecs: number; innerProducts: number; relativeError: number; msMedian?: number; setupMs?: number; poles?: number }[] = [];
    const rationalRows: string[] = [];
    log("φ-actions τφ1(τL)v1 + τ²φ2(τL)v2 on the 128×128 single-layer rotating wave operator (4000 m, f = 1e-4 1/s), tolerance 1e-8;");
    log("error in the energy norm against Chebyshev at 1e-13; substep uses ⌈hρ⌉ RK4 sub-steps (hρ = 1 each), as a split-explicit cycle would");
    log("backend     hρ      ms (best)   matvecs   inner products   relative error");
    const backends: PhiBackendName[] = ["chebyshev", "krylov", "taylor", "substep"];
    for (const hRho of [2 * Math.SQRT2, 10, 100, 300]) {
      if (quick && hRho > 100) continue;
      const tau = hRho / rho;
      createPhiAction("chebyshev", op, { tol: 1e-13, maxPhi: 2 }).apply(ref, tau, v);
      const scale = enorm(ref);
      for (const backend of backends) {
        const phi = createPhiAction(backend, op, { tol: 1e-8, maxPhi: 2, ...(backend === "substep" ? { substeps: Math.ceil(hRho) } : {}) });
        const t = time(() => phi.apply(out, tau, v), { warmup: 1, reps: hRho > 50 ? 2 : 4, inner: 1 });
        const err = enorm(out, ref) / scale;
        rows.push({ backend, hRho: round(hRho), ms: round(t.best), matvecs: phi.stats.matvecs, innerProducts: phi.stats.innerProducts, relativeError: round(err, 3) });
        log(`${backend.padEnd(10)} ${hRho.toFixed(1).padStart(6)}  ${t.best.toFixed(1).padStart(9)}   ${String(phi.stats.matvecs).padStart(7)}   ${String(phi.stats.innerProducts).padStart(14)}   ${err.toExponential(2)}`);
      }
      if (quick && hRho > 10) continue;
      // rational: a fresh operator per hρ, so that one set of pole factorizations is held at a time
      const restR = restLinearOperator(run.model);
      const solver = restR.shiftedSolver({ maxComplexFill: RATIONAL_FILL, maxComplexWork: 1e12 });
      const phi = createPhiAction("rational", restR.interfaceForm, { tol: 1e-8, maxPhi: 2 });
      let first: number;
      try {
        const t0 = performance.now();
        phi.apply(out, tau, v);
        first = performance.now() - t0;
      } catch (e) {
        rationalRows.push(`rational   ${hRho.toFixed(1).padStart(6)}  refused: ${(e as Error).message}`);
        continue;
      }
      const setupMatvecs = phi.stats.matvecs;
      const t = time(() => phi.apply(out, tau, v), { warmup: 0, reps: 3, inner: 1 });
      const err = enorm(out, ref) / scale;
      const poles = phi.stats.substeps, cs = solver.complex.stats;
      rows.push({ backend: "rational", hRho: round(hRho), ms: round(t.best), msMedian: round(t.median), matvecs: round(phi.stats.matvecs, 4), innerProducts: phi.stats.innerProducts, relativeError: round(err, 3), setupMs: round(first - t.best), poles });
      rationalRows.push(`rational   ${hRho.toFixed(1).padStart(6)}  ${poles.toString().padStart(5)}   ${((first - t.best) / 1000).toFixed(1).padStart(8)} (${Math.round(setupMatvecs - phi.stats.matvecs)})   ${t.best.toFixed(0).padStart(8)} / ${t.median.toFixed(0).padStart(6)}   ${Math.round(phi.stats.matvecs).toString().padStart(9)}   ${err.toExponential(2)}   ${cs.largestGrowth.toFixed(1)}`);
    }
    log("rational: trapezoid rule on the contour (rational.ts), one complex sparse LU per pole (N/2 poles by conjugate symmetry), kept;");
    log(`  set-up = probing, ordering and the factorizations (first action minus a later one), memory bound ${RATIONAL_FILL.toExponential(1)} factor numbers (~${(RATIONAL_FILL * 16 / 1e9).toFixed(0)} GB);`);
    log("  matvec-eq = multiply-adds of the substitutions and residual products over those of one product with L");
    log("backend     hρ    poles   set-up s (matvec-eq)   ms per action best / median   matvec-eq   relative error   LU growth");
    for (const line of rationalRows) log(line);
    // No outside comparison figure is printed: only what this bench measures itself.
    return rows;
  },
};

interface Config { label: string; spec: Record<string, unknown> }

const FAST_CONFIGS: Config[] = [
  { label: "split-explicit", spec: { method: "split-explicit" } },
  { label: "etdrk4 modes:1 krylov", spec: { method: "etdrk4", linear: "modes:1", backend: "krylov" } },
  { label: "etdrk4 modes:1 chebyshev", spec: { method: "etdrk4", linear: "modes:1", backend: "chebyshev" } },
  { label: "etdrk4 modes:2 krylov", spec: { method: "etdrk4", linear: "modes:2", backend: "krylov" } },
  { label: "etdrk4 rest krylov", spec: { method: "etdrk4", linear: "rest", backend: "krylov" } },
  { label: "etdrk4 rest chebyshev", spec: { method: "etdrk4", linear: "rest", backend: "chebyshev" } },
  { label: "etd2rk modes:1 krylov", spec: { method: "etd2rk", linear: "modes:1", backend: "krylov" } },
  { label: "exprb43 jacobian krylov", spec: { method: "exprb43", linear: "jacobian", backend: "krylov" } },
];

/** The main demo basin: wall time per simulated day, RK4 near its limit versus the fast steppers at 20× and 50×. */
export const demoSection: BenchSection = {
  key: "demoBasin",
  run({ log, quick }) {
    const raw = builtinScenario("shelf-gyre-basin") as Record<string, unknown>;
    const probe = createRun(raw);
    const limit = probe.rk4DtLimit();
    const simulated = quick ? 21600 : 43200;
    const perDay = (r: ReturnType<typeof execute>) => (r.wallSeconds * 86400) / r.simulatedSeconds;
    // every Δt divides the simulated time exactly, so all runs end at the same moment of the spin-up
    const fitDt = (target: number, round: (x: number) => number) => simulated / Math.max(1, round(simulated / target));
    const rk4Dt = fitDt(0.95 * limit, Math.ceil);
    const rk4 = execute(createRun(raw, { method: "rk4", dt: rk4Dt }), { duration: simulated, clock: () => performance.now() / 1000 });
    const rk4PerDay = perDay(rk4);
    const eRef = rk4.energy.final;
    log(`Main demo basin (${probe.mesh.nCells} cells, 3 layers), ${simulated / 3600} h of wind spin-up from rest`);
    log(`  rk4 at ${(rk4Dt / limit).toFixed(3)} × its limit (dt ${rk4Dt.toFixed(1)} s): ${rk4PerDay.toFixed(2)} s per simulated day`);
    log("  energy difference: |E − E_rk4| / E_rk4 at the end of the spin-up");
    log("  stepper                     × limit   dt (s)   status      s per sim. day   speed-up   matvecs/step   inner products/step   energy difference");
    const known = new Set(methodNames());
    const rows: Record<string, unknown>[] = [];
    let best: { label: string; dt: number; secondsPerSimDay: number } | null = null;
    for (const c of FAST_CONFIGS) {
      if (!known.has(c.spec.method as string)) continue;
      for (const factor of quick ? [20] : [20, 50]) {
        const dt = fitDt(factor * limit, Math.round);
        let r: ReturnType<typeof execute>;
        try {
          r = execute(createRun(raw, { ...c.spec, dt } as never), { duration: simulated, clock: () => performance.now() / 1000 });
        } catch (e) {
          log(`  ${c.label.padEnd(27)} ${String(factor).padStart(6)}   refused: ${(e as Error).message}`);
          continue;
        }
        const s = perDay(r);
        const stable = r.status === "completed";
        const energyVsRk4 = Math.abs(r.energy.final - eRef) / Math.abs(eRef);
        const row = { label: c.label, factor: round(dt / limit, 3), dt: round(dt), status: r.status, secondsPerSimDay: round(s), speedup: round(rk4PerDay / s, 3),
          matvecsPerStep: round(r.matvecsPerStep, 4), innerProductsPerStep: round(r.steps ? r.innerProducts / r.steps : 0, 4), energyVsRk4: round(energyVsRk4, 3) };
        rows.push(row);
        log(`  ${c.label.padEnd(27)} ${(dt / limit).toFixed(1).padStart(6)}  ${dt.toFixed(0).padStart(7)}   ${r.status.padEnd(10)} ${s.toFixed(3).padStart(10)}      ${(rk4PerDay / s).toFixed(1).padStart(7)}   ${row.matvecsPerStep.toString().padStart(12)}   ${row.innerProductsPerStep.toString().padStart(12)}          ${stable ? energyVsRk4.toExponential(2) : "—"}`);
        if (stable && (!best || s < best.secondsPerSimDay)) best = { label: `${c.label} @ ${factor}×`, dt: round(dt), secondsPerSimDay: round(s) };
      }
    }
    const speedup = best ? round(rk4PerDay / best.secondsPerSimDay, 3) : null;
    if (best) log(`  best: ${best.label}, ${best.secondsPerSimDay} s per simulated day, ${speedup}× faster than rk4`);
    return { rk4SecondsPerSimDay: round(rk4PerDay), rk4Dt: round(rk4Dt), simulatedSeconds: simulated, best, speedup, rows };
  },
};
