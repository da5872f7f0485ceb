/**
 * The model side of the stepper interface (solver/time/interface.ts): one `Problem` per model, built on first
 * use and cached, so every stepper created on the same model shares the rest operator, the modal restrictions
 * and their spectral bounds instead of rebuilding them.
 *
 * Linear parts (all on full-state vectors):
 *   rest      L, the rest-state linearization (linear.ts), fixed; φ-actions run in interface-displacement
 *             variables, where its energy weights are diagonal (similarity transform T L T⁻¹).
 *   modes:N   M = Π̃ L Π, L restricted to the N fastest vertical modes (restriction.ts), fixed; φ-actions on
 *             the N-mode modal operator.
 *   jacobian  J = F'(x), exact Jacobian-vector products (jacobian.ts), re-formed by `linearize`; φ-actions in
 *             energy-scaled variables (Euclidean Arnoldi there), since J is not skew.
 *
 * Counters: the problem counts the tendency evaluations it is asked for, the matvecs and inner products of
 * every operator it has handed out, and the fast/slow split's kernels as fractional tendency equivalents
 * (a count of stencil terms, see `fastSlowWork`), so the cost of any stepper is measured without its help.
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, OperatorCounters, PhiAction, PhiBackendName, PhiFilter, PhiOptions } from "../linalg/types.js";
import { createPhiAction, parsePhiFilter, phiBackends } from "../linalg/registry.js";
import { applyAtTimes, growVectors } from "../linalg/phiTimes.js";
import type { FastSlowSplit, LinearPart, PhiRequest, Problem, ProblemCounters, StateLayout } from "../time/interface.js";
import { divergence, gradient } from "../mesh/operators.js";
import { barotropicKernels } from "../kernels/barotropicKernels.js";
import type { Mesh } from "../mesh/types.js";
import type { ShallowWaterModel } from "./shallowWater.js";
import { restLinearOperator, type RestLinearOperator } from "./linear.js";
import { jacobianOperator } from "./jacobian.js";
import { modalRestriction, restrictedPhiAction, type ModalRestriction } from "./restriction.js";
import { edgeThickness, potentialVorticity, pvFlux } from "./terms.js";
import { deepestColumnSpeed, hexMaxFrequency, verticalModes } from "./modes.js";
import { parseLinearName } from "../time/options.js";

/** Default highest φ index of a φ-action when the caller does not say. */
export const DEFAULT_MAX_PHI = 4;

/** Σ_k τ^k φ_k(τA) v_k in layer variables from a φ-action of S A S⁻¹ (out = S⁻¹ φ(S v)). Work arrays once. */
function similarityPhi(inner: PhiAction, n: number, maxPhi: number, to: (o: Float64Array, x: Float64Array) => void,
  from: (o: Float64Array, y: Float64Array) => void): PhiAction {
  const w: Float64Array[] = [];
  for (let k = 0; k <= maxPhi; k++) w.push(new Float64Array(n));
  const z = new Float64Array(n);
  const wv: Float64Array[] = [];
  const zs: Float64Array[] = [];
  const into = (v: readonly Float64Array[]) => {
    wv.length = 0;
    for (let k = 0; k < v.length; k++) { to(w[k], v[k]); wv.push(w[k]); }
  };
  return {
    name: inner.name, stats: inner.stats,
    apply(out, tau, v) {
      into(v);
      inner.apply(z, tau, wv);
      from(out, z);
    },
    // S v_k does not depend on τ: one multi-time call of the inner action
    applyTimes(outs, taus, v) {
      into(v);
      growVectors(zs, taus.length, n);
      applyAtTimes(inner, zs, taus, wv);
      for (let i = 0; i < taus.length; i++) from(outs[i], zs[i]);
    },
  };
}

/** Resolve the φ options of a request into the backend's options, with field-named errors. */
function phiOptions(req: PhiRequest, bound: number | undefined, extraPhi: number): { backend: PhiBackendName; opts: PhiOptions; maxPhi: number; field: string } {
  const field = req.field ?? "stepper";
  const backend = req.backend ?? "krylov";
  if (typeof backend !== "string" || !phiBackends.some((b) => b.name === backend)) {
    throw new SolverError("bad-input", `${field}.backend: unknown backend ${JSON.stringify(backend)}; known backends: ${phiBackends.map((b) => b.name).join(", ")}`, `${field}.backend`);
  }
  const tolerance = req.tolerance ?? 1e-8;
  if (typeof tolerance !== "number" || !Number.isFinite(tolerance) || !(tolerance > 0) || tolerance >= 1) {
    throw new SolverError("bad-input", `${field}.tolerance must be a relative tolerance between 0 and 1 (e.g. 1e-8), got ${JSON.stringify(tolerance)}`, `${field}.tolerance`);
  }
  const maxPhi = req.maxPhi ?? DEFAULT_MAX_PHI;
  if (!(Number.isInteger(maxPhi) && maxPhi >= 0 && maxPhi <= 12)) throw new SolverError("bad-input", `${field}.maxPhi must be a whole number from 0 to 12, got ${maxPhi}`, `${field}.maxPhi`);
  const substeps = req.substeps === 0 ? undefined : req.substeps;
  if (substeps !== undefined && !(Number.isInteger(substeps) && substeps >= 1)) {
    throw new SolverError("bad-input", `${field}.substeps must be a whole number ≥ 0 (0 = choose from the spectral bound), got ${JSON.stringify(req.substeps)}`, `${field}.substeps`);
  }
  const f = req.filter && typeof req.filter === "object" && "order" in req.filter ? req.filter : parsePhiFilter(req.filter, `${field}.filter`);
  let filter: PhiFilter | undefined;
  if (f) {
    if (backend !== "chebyshev" && backend !== "rational-damped") throw new SolverError("bad-input", `${field}.filter: the filter works with backends chebyshev and rational-damped only, not "${backend}"`, `${field}.filter`);
    // chebyshev damps near the spectral bound by default; rational-damped needs the cut-off it keeps accurate
    filter = { cutoff: f.cutoff ?? (backend === "chebyshev" ? bound ?? NaN : NaN), order: f.order, strength: f.strength ?? 36 };
  }
  return { backend: backend as PhiBackendName, opts: { tol: tolerance, maxPhi: maxPhi + extraPhi, substeps, filter, field }, maxPhi, field };
}

/** Work of the fast/slow split's kernels, in full tendency evaluations (a count of stencil terms, not a timing). */
export interface FastSlowWork {
  /** Stencil terms of one full tendency evaluation. */
  tendency: number;
  /** One barotropic sub-step (a surface tendency, a pressure gradient, two Coriolis terms, pointwise updates). */
  substep: number;
  /** One long-step pass of bookkeeping (freeze, split of the tendency, reconciliation). */
  pass: number;
}

/**
 * Work model: one unit per multiply-add over a stencil entry (CSR lists of the mesh) or per array element,
 * counted kernel by kernel. A model, not a timing: it ignores memory effects, and it prices plain array
 * loops like indirect-addressed stencils, so it overestimates the split's cost (on the 3-layer demo basin it
 * gives 0.30 tendency evaluations per sub-step and 0.86 per pass).
 */
export function fastSlowWork(model: ShallowWaterModel): FastSlowWork {
  const m: Mesh = model.mesh;
  const p = model.params;
  const L = p.nLayers;
  const ne = m.nEdges;
  const nc = m.nCells;
  const nT = m.tangentIndex.length;
  const nCE = m.cellEdgeIndex.length;
  const nVE = 3 * m.nVertices;
  const lap = nCE + 2 * nVE + 2 * ne; // divergence, curl, edge assembly
  let perLayer = 2 * ne + ne + nCE + nCE + nVE + (nVE + ne) + nT + 4 * ne; // h_e, F, D, K, ζ, q, PV flux, ∇B
  if (p.viscosity > 0) perLayer += lap + ne;
  if (p.biharmonic > 0) perLayer += lap + ne;
  const tendency = L * (perLayer + 2 * nc) + (p.windStress ? ne : 0) + (p.bottomDrag > 0 ? ne : 0);
  const substep = 2 * ne + 2 * nT + nCE + 9 * ne + 2 * nc;
  const pass = L * (2 * (nc + ne) + 3 * 2 * ne + 12 * ne + nCE + nc) + 2 * ne + nT + (nVE + ne) + 8 * ne + 4 * nc;
  return { tendency, substep: substep / tendency, pass: pass / tendency };
}


/** Mutable tallies behind a problem's counters. */
interface Tally { tendency: number; extraMatvecs: number; phiActions: number; operators: Set<OperatorCounters> }

function buildFastSlow(model: ShallowWaterModel, tally: Tally): FastSlowSplit {
  const m = model.mesh;
  const p = model.params;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset } = model.layout;
  const nv = m.nVertices;
  const g = p.reducedGravity[0];
  const open = m.edgeOpen;
  const work = fastSlowWork(model);
  // a sub-step calls surfaceTendency, pressure and coriolis twice; a pass calls freeze, splitTendency, reconcile
  const wSub = work.substep / 4, wPass = work.pass / 3;
  const modes = verticalModes(p.reducedGravity, p.nominalThickness as number[], p.f0);
  const speed = deepestColumnSpeed(p.reducedGravity, p.nominalThickness, p.bottom);
  const c1 = L > 1 ? modes.speeds[1] : 0; // first baroclinic speed of the nominal stack

  const hEdge = new Float64Array(L * ne); // frozen ĥ_k
  const hFrozen = new Float64Array(ne); // frozen Ĥ
  const hNew = new Float64Array(L * ne);
  const Hnew = new Float64Array(ne);
  const edgeTmp = new Float64Array(ne);
  const mean = new Float64Array(ne);
  const theta = new Float64Array(ne);
  const trans = new Float64Array(ne);
  const grad = new Float64Array(ne);
  const cor = new Float64Array(ne);
  const ubC = new Float64Array(ne);
  const div = new Float64Array(nc);
  const col = new Float64Array(nc);
  const etaC = new Float64Array(nc);
  const qVertex = new Float64Array(nv);
  const qEdge = new Float64Array(ne);
  const noVorticity = new Float64Array(nv);
  const flux = new Float64Array(L * ne);
  const hScratch = new Float64Array(L * ne);
  const Hscratch = new Float64Array(ne);

  const layerEdgeThickness = (out: Float64Array, x: Float64Array): void => {
    for (let k = 0; k < L; k++) {
      edgeThickness(edgeTmp, m, x, k * nc);
      out.set(edgeTmp, k * ne);
    }
  };
  const columnSum = (out: Float64Array, layered: Float64Array): void => {
    out.fill(0);
    for (let k = 0; k < L; k++) for (let e = 0; e < ne; e++) out[e] += layered[k * ne + e];
  };
  /** ū_e = Σ_k ĥ_{k,e} u_{k,e} / Ĥ_e, with u read from a layer-major block at `uOff`. */
  const weightedMean = (out: Float64Array, hE: Float64Array, H: Float64Array, u: Float64Array, uOff: number): void => {
    out.fill(0);
    for (let k = 0; k < L; k++) for (let e = 0; e < ne; e++) out[e] += hE[k * ne + e] * u[uOff + k * ne + e];
    for (let e = 0; e < ne; e++) out[e] /= H[e];
  };
  const freeSurface = (out: Float64Array, x: Float64Array): void => {
    out.set(p.bottom);
    for (let k = 0; k < L; k++) for (let i = 0; i < nc; i++) out[i] += x[k * nc + i];
  };
  // the sub-step operators as WebAssembly kernels (same operation order); null = the loops below
  const kernels = model.kernels === "wasm" ? barotropicKernels(m, g) : null;
  const coriolis = (out: Float64Array, u: Float64Array): void => {
    if (kernels) return kernels.coriolis(out, u);
    for (let e = 0; e < ne; e++) trans[e] = hFrozen[e] * u[e];
    pvFlux(out, 0, m, trans, qEdge);
  };

  return {
    nLayers: L, nCells: nc, nEdges: ne,
    maxFrequency: hexMaxFrequency(speed, m.spacing),
    baroclinicFrequency: hexMaxFrequency(c1, m.spacing),
    newCellVector: () => new Float64Array(nc),
    newEdgeVector: () => new Float64Array(ne),
    newLayerEdgeVector: () => new Float64Array(L * ne),
    barotropic(eta, ubar, x) {
      layerEdgeThickness(hScratch, x);
      columnSum(Hscratch, hScratch);
      weightedMean(ubar, hScratch, Hscratch, x, uOffset);
      freeSurface(eta, x);
    },
    baroclinic(out, x, ubar) {
      for (let k = 0; k < L; k++) {
        const ko = k * ne, uo = uOffset + ko;
        for (let e = 0; e < ne; e++) out[ko + e] = x[uo + e] - ubar[e];
      }
    },
    freeze(x) {
      tally.tendency += wPass;
      layerEdgeThickness(hEdge, x);
      columnSum(hFrozen, hEdge);
      freeSurface(etaC, x);
      for (let i = 0; i < nc; i++) col[i] = etaC[i] - p.bottom[i];
      potentialVorticity(qVertex, qEdge, m, noVorticity, col, 0, p.coriolisVertex);
      kernels?.freeze(hFrozen, qEdge);
    },
    surfaceTendency(out, ubar) {
      tally.tendency += wSub;
      tally.extraMatvecs++;
      if (kernels) return kernels.surfaceTendency(out, ubar);
      for (let e = 0; e < ne; e++) trans[e] = hFrozen[e] * ubar[e];
      divergence(div, m, trans);
      for (let i = 0; i < nc; i++) out[i] = -div[i];
    },
    pressure(out, eta) {
      tally.tendency += wSub;
      if (kernels) return kernels.pressure(out, eta);
      gradient(grad, m, eta);
      for (let e = 0; e < ne; e++) out[e] = -g * grad[e];
    },
    coriolis(out, ubar) {
      tally.tendency += wSub;
      coriolis(out, ubar);
    },
    splitTendency(slow, baroclinic, x, T) {
      tally.tendency += wPass;
      weightedMean(ubC, hEdge, hFrozen, x, uOffset);
      weightedMean(mean, hEdge, hFrozen, T, uOffset);
      layerEdgeThickness(hNew, T); // ∂_t ĥ_k
      theta.fill(0);
      for (let k = 0; k < L; k++) {
        const ko = k * ne, uo = uOffset + ko;
        for (let e = 0; e < ne; e++) theta[e] += (x[uo + e] - ubC[e]) * hNew[ko + e];
      }
      for (let e = 0; e < ne; e++) theta[e] /= hFrozen[e];
      gradient(grad, m, etaC);
      coriolis(cor, ubC);
      for (let e = 0; e < ne; e++) slow[e] = open[e] ? mean[e] + theta[e] - (-g * grad[e] + cor[e]) : 0;
      for (let k = 0; k < L; k++) {
        const ko = k * ne, uo = uOffset + ko;
        for (let e = 0; e < ne; e++) baroclinic[ko + e] = T[uo + e] - mean[e] - theta[e];
      }
    },
    reconcile(out, xn, vPrime, vbar, uPrime, ubar, dt) {
      tally.tendency += wPass;
      const sumF = trans;
      sumF.fill(0);
      for (let k = 0; k < L; k++) {
        const ko = k * ne;
        for (let e = 0; e < ne; e++) {
          const F = hEdge[ko + e] * (vPrime[ko + e] + vbar[e]);
          flux[ko + e] = F;
          sumF[e] += F;
        }
      }
      for (let e = 0; e < ne; e++) sumF[e] = (hFrozen[e] * vbar[e] - sumF[e]) / hFrozen[e]; // ΔU
      for (let k = 0; k < L; k++) {
        const ko = k * ne;
        for (let e = 0; e < ne; e++) flux[ko + e] += hEdge[ko + e] * sumF[e];
        divergence(div, m, flux, 0, ko);
        const ho = k * nc;
        for (let i = 0; i < nc; i++) out[ho + i] = xn[ho + i] - dt * div[i];
      }
      layerEdgeThickness(hNew, out);
      columnSum(Hnew, hNew);
      weightedMean(mean, hNew, Hnew, uPrime, 0);
      for (let k = 0; k < L; k++) {
        const ko = k * ne, uo = uOffset + ko;
        for (let e = 0; e < ne; e++) out[uo + e] = open[e] ? uPrime[ko + e] - mean[e] + ubar[e] : 0;
      }
    },
  };
}

type MutableOp = { -readonly [K in keyof LinearOperator]: LinearOperator[K] };

/** A `Problem` with the model-side extras the driver and tests use. */
export interface ModelProblem extends Problem {
  readonly model: ShallowWaterModel;
  /** The rest-state operator (built on first use). */
  readonly rest: RestLinearOperator;
  /** The N-mode restriction (built on first use, cached). */
  restriction(modes: number): ModalRestriction;
}

const cache = new WeakMap<ShallowWaterModel, ModelProblem>();

/** The stepper interface of a model, built once per model and cached. */
export function problemFor(model: ShallowWaterModel): ModelProblem {
  let pr = cache.get(model);
  if (!pr) {
    pr = buildProblem(model);
    cache.set(model, pr);
  }
  return pr;
}

function buildProblem(model: ShallowWaterModel): ModelProblem {
  const n = model.n;
  const L = model.params.nLayers;
  const layout: StateLayout = { ...model.layout, thicknessOffset: 0 };
  const tally: Tally = { tendency: 0, extraMatvecs: 0, phiActions: 0, operators: new Set() };
  /** A φ-action whose calls the problem counts. */
  const counted = (phi: PhiAction): PhiAction => ({
    name: phi.name, stats: phi.stats,
    apply(out, tau, v) {
      tally.phiActions++;
      phi.apply(out, tau, v);
    },
    /** One vector set at several times: one φ-action (a shared basis where the backend has one). */
    applyTimes(outs, taus, v) {
      tally.phiActions++;
      applyAtTimes(phi, outs, taus, v);
    },
  });
  let rest: RestLinearOperator | undefined;
  const restrictions = new Map<number, ModalRestriction>();
  const fixedParts = new Map<string, LinearPart>();
  let fastSlow: FastSlowSplit | undefined;

  const getRest = (): RestLinearOperator => {
    if (!rest) {
      rest = restLinearOperator(model);
      tally.operators.add(rest.counters);
    }
    return rest;
  };
  const getRestriction = (modes: number): ModalRestriction => {
    let r = restrictions.get(modes);
    if (!r) {
      r = modalRestriction(model, modes, getRest());
      restrictions.set(modes, r);
      tally.operators.add(r.operator.counters);
    }
    return r;
  };

  const restPart = (): LinearPart => {
    const op = getRest();
    return {
      name: "rest", skew: true, spectralBound: op.spectralBound, reformed: false,
      apply: (out, x) => op.apply(out, x),
      solve: (out, b, gamma) => op.solve(out, b, gamma),
      linearize() {},
      phi(req = {}) {
        const { backend, opts, maxPhi } = phiOptions(req, op.spectralBound, 0);
        const inner = createPhiAction(backend, op.interfaceForm, opts);
        return counted(similarityPhi(inner, n, maxPhi, op.toInterface, op.fromInterface));
      },
    };
  };
  const modesPart = (modes: number): LinearPart => {
    const r = getRestriction(modes);
    return {
      name: `modes:${modes}`, skew: true, spectralBound: r.operator.spectralBound ?? getRest().spectralBound, reformed: false,
      apply: (out, x) => r.restricted.apply(out, x),
      solve: (out, b, gamma) => r.solve(out, b, gamma),
      linearize() {},
      phi(req = {}) {
        const { backend, opts, maxPhi, field } = phiOptions(req, r.operator.spectralBound, 1);
        // the restricted φ keeps its identity part v/k! unfiltered (exact layer mass), so a filter inside the modal φ
        // would leave the waves it removes to explicit Euler (measured: a blow-up within a few steps)
        if (opts.filter) {
          throw new SolverError("bad-input", `${field}.filter: the filter${backend === "rational-damped" ? " (and so rational-damped)" : ""} works with linear rest (or jacobian) only, not modes:${modes}: with modes:N the waves it removes would be stepped by explicit Euler`, `${field}.filter`);
        }
        return counted(restrictedPhiAction(r, createPhiAction(backend, r.operator, opts), maxPhi));
      },
    };
  };
  const jacobianPart = (field: string): LinearPart => {
    const J = jacobianOperator(model);
    tally.operators.add(J.counters);
    const op = getRest();
    const sqrtW = Float64Array.from(op.interfaceForm.weights!, Math.sqrt);
    const tA = new Float64Array(n), tB = new Float64Array(n);
    const to = (out: Float64Array, x: Float64Array) => { op.toInterface(out, x); for (let q = 0; q < n; q++) out[q] *= sqrtW[q]; };
    const from = (out: Float64Array, y: Float64Array) => { for (let q = 0; q < n; q++) tA[q] = y[q] / sqrtW[q]; op.fromInterface(out, tA); };
    const scaled: MutableOp = {
      n, counters: J.counters, skew: false,
      apply(out, y) {
        from(tB, y);
        J.apply(tA, tB);
        to(out, tA);
      },
    };
    Object.defineProperty(scaled, "spectralBound", { get: () => J.spectralBound, enumerable: true });
    return {
      name: "jacobian", skew: false, reformed: true,
      get spectralBound() { return J.spectralBound; },
      apply: (out, x) => J.apply(out, x),
      linearize(x) {
        J.setState(x);
        tally.tendency += 1; // forming the linearization costs about one tendency evaluation
      },
      phi(req = {}) {
        const { backend, opts, maxPhi } = phiOptions({ field, ...req }, J.spectralBound, 0);
        if (backend === "chebyshev" || backend === "rational") {
          const f = req.field ?? field;
          throw new SolverError("bad-input",
            `${f}.backend: "${backend}" needs a skew operator with a purely imaginary spectrum and a spectral bound; ` +
            `linear: jacobian is not skew (advection and forcing move its spectrum off the imaginary axis) — use backend krylov or taylor`,
            `${f}.backend`);
        }
        return counted(similarityPhi(createPhiAction(backend, scaled, opts), n, maxPhi, to, from));
      },
    };
  };

  const counters: ProblemCounters = {
    get tendencyEvaluations() { return tally.tendency; },
    get matvecs() { let s = tally.extraMatvecs; for (const c of tally.operators) s += c.matvecs; return s; },
    get innerProducts() { let s = 0; for (const c of tally.operators) s += c.innerProducts; return s; },
    get phiActions() { return tally.phiActions; },
  };

  return {
    model, n, layout, counters,
    get rest() { return getRest(); },
    restriction: getRestriction,
    newVector: () => new Float64Array(n),
    tendency(out, x, t) {
      tally.tendency++;
      model.tendency(out, x, t);
    },
    linear(name, field = "stepper.linear") {
      const kind = parseLinearName(name, L, field);
      if (kind.kind === "jacobian") return jacobianPart(field.replace(/\.linear$/, ""));
      const modes = kind.kind === "modes" ? kind.modes : 0;
      const key = modes ? `modes:${modes}` : "rest";
      let part = fixedParts.get(key);
      if (!part) {
        part = modes ? modesPart(modes) : restPart();
        fixedParts.set(key, part);
      }
      return part;
    },
    get fastSlow() {
      if (!fastSlow) fastSlow = buildFastSlow(model, tally);
      return fastSlow;
    },
  };
}
