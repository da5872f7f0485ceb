/**
 * Generic exponential Runge–Kutta / exponential Rosenbrock engine (numerics reference §6), driven by the
 * φ-coefficient tables of expTables.ts, with three linear parts:
 *
 *   rest      L, the rest-state linearization (model/linear.ts), fixed; φ-actions in interface variables
 *             where its energy weights are diagonal.
 *   modes:N   M = Π̃ L Π, L restricted to the N fastest vertical modes (model/restriction.ts), fixed; φ-actions
 *             on the N-mode modal operator.
 *   jacobian  J_n = F'(x_n), exact Jacobian-vector products (model/jacobian.ts), re-formed every step; φ-actions
 *             in energy-scaled variables (Euclidean Arnoldi there), as J_n is not skew.
 *
 * Increment form (reference §6.6): with F0 = F(x_n) and D_j = F(U_j) − F0 − A (U_j − x_n) (= N(U_j) − N(x_n)
 * for the linear part A), stage i is U_i = x_n + h c_i φ1(c_i hA) F0 + h Σ_{j≥1} a_ij(hA) D_j and the new state
 * x_n + h φ1(hA) F0 + h Σ_{j≥1} b_j(hA) D_j. φ-functions only ever act on tendencies and differences of
 * tendencies, whose layer masses are zero, and every backend returns c·v + A(…) of such vectors, whose
 * thickness part is a layer divergence: layer mass is exact to round-off, whatever the φ tolerance.
 * Terms of a row with the same node fraction `at` share one φ-combination call at τ = at·h
 * (h coef φ_k(τA) D_j = τ^k φ_k(τA)·(h coef/τ^k) D_j); a row that mixes nodes (Cox–Matthews a_41) makes two calls.
 */
import { SolverError } from "../errors.js";
import type { LinearOperator, OperatorCounters, PhiAction, PhiBackendName, PhiFilter, PhiOptions } from "../linalg/types.js";
import { createPhiAction, phiBackends } from "../linalg/registry.js";
import type { ShallowWaterModel } from "../model/shallowWater.js";
import { restLinearOperator, type RestLinearOperator } from "../model/linear.js";
import { jacobianOperator } from "../model/jacobian.js";
import { modalRestriction, restrictedPhiAction } from "../model/restriction.js";
import { checkExpTable, type ExpRkTable } from "./expTables.js";
import { emptyStats, type OdeProblem, type Stepper } from "./types.js";

/** What the engine needs from a linear part A. */
export interface LinearPart {
  /** "rest", "modes:N" or "jacobian". */
  readonly name: string;
  /** True when A is re-formed at every step (exponential Rosenbrock). */
  readonly reformed: boolean;
  /** Called at the start of each step with x_n. */
  prepare(x: Float64Array): void;
  /** out = A d (layer variables). */
  apply(out: Float64Array, d: Float64Array): void;
  /** out = Σ_k τ^k φ_k(τA) v[k] (layer variables). */
  readonly phi: PhiAction;
  /** Counters of every operator the part applies (summed into the stepper's stats). */
  readonly counters: readonly OperatorCounters[];
}

export interface LinearPartOptions {
  linear: string;
  backend: PhiBackendName;
  tolerance: number;
  substeps?: number;
  filter?: PhiFilter | { order: number; strength?: number; cutoff?: number };
  /** Highest φ index the engine passes. */
  maxPhi: number;
  /** Field prefix for messages, e.g. "stepper". */
  field?: string;
  /** Reuse an already built rest operator. */
  rest?: RestLinearOperator;
}

type MutableOp = { -readonly [K in keyof LinearOperator]: LinearOperator[K] };

/** Σ_k τ^k φ_k(τA) v_k in layer variables from a φ-action of S A S⁻¹ (out = S⁻¹ φ(S v)). Work arrays once. */
function similarityPhi(inner: PhiAction, n: number, maxPhi: number, to: (o: Float64Array, x: Float64Array) => void,
  from: (o: Float64Array, y: Float64Array) => void): PhiAction {
  const w: Float64Array[] = [];
  for (let k = 0; k <= maxPhi; k++) w.push(new Float64Array(n));
  const z = new Float64Array(n);
  const wv: Float64Array[] = [];
  return {
    name: inner.name, stats: inner.stats,
    apply(out, tau, v) {
      wv.length = 0;
      for (let k = 0; k < v.length; k++) { to(w[k], v[k]); wv.push(w[k]); }
      inner.apply(z, tau, wv);
      from(out, z);
    },
  };
}

function resolveFilter(f: LinearPartOptions["filter"], bound: number | undefined): PhiFilter | undefined {
  if (!f) return undefined;
  const cutoff = f.cutoff ?? bound ?? NaN;
  return { cutoff, order: f.order, strength: f.strength ?? 36 };
}

/** Parse "rest" | "modes:N" | "jacobian" (field-named errors). */
export function parseLinearName(s: unknown, nLayers: number, field = "stepper.linear"): { kind: "rest" | "jacobian" } | { kind: "modes"; modes: number } {
  if (s === "rest" || s === "jacobian") return { kind: s };
  if (typeof s === "string") {
    const mt = /^modes:(\d+)$/.exec(s.trim());
    if (mt) {
      const k = Number(mt[1]);
      if (k < 1) throw new SolverError("bad-input", `${field}: modes:${k} must keep at least 1 mode`, field);
      if (k > nLayers) throw new SolverError("bad-input", `${field}: modes:${k} asks for more modes than the ${nLayers} layer${nLayers === 1 ? "" : "s"}`, field);
      return { kind: "modes", modes: k };
    }
  }
  throw new SolverError("bad-input", `${field}: unknown linear part ${JSON.stringify(s)}; expected "rest", "modes:N" (1 ≤ N ≤ ${nLayers}) or "jacobian"`, field);
}

export function buildLinearPart(model: ShallowWaterModel, o: LinearPartOptions): LinearPart {
  const field = o.field ?? "stepper";
  const L = model.params.nLayers;
  const kind = parseLinearName(o.linear, L, `${field}.linear`);
  const n = model.n;
  const baseOpts = (bound: number | undefined, maxPhi: number): PhiOptions => ({
    tol: o.tolerance, maxPhi, substeps: o.substeps, filter: resolveFilter(o.filter, bound),
  });
  const rest = o.rest ?? restLinearOperator(model);
  if (kind.kind === "rest") {
    const inner = createPhiAction(o.backend, rest.interfaceForm, baseOpts(rest.spectralBound, o.maxPhi));
    return {
      name: "rest", reformed: false, counters: [rest.counters],
      prepare() {},
      apply: (out, d) => rest.apply(out, d),
      phi: similarityPhi(inner, n, o.maxPhi, rest.toInterface, rest.fromInterface),
    };
  }
  if (kind.kind === "modes") {
    const r = modalRestriction(model, kind.modes, rest);
    const modal = createPhiAction(o.backend, r.operator, baseOpts(r.operator.spectralBound, o.maxPhi + 1));
    return {
      name: `modes:${kind.modes}`, reformed: false, counters: [r.operator.counters],
      prepare() {},
      apply: (out, d) => r.restricted.apply(out, d),
      phi: restrictedPhiAction(r, modal, o.maxPhi),
    };
  }
  if (o.backend === "chebyshev" || o.backend === "rational") {
    throw new SolverError("bad-input",
      `${field}.backend: "${o.backend}" needs a skew operator with a purely imaginary spectrum and a spectral bound; ` +
      `linear: jacobian is not skew (advection and forcing move its spectrum off the imaginary axis) — use backend krylov or taylor`,
      `${field}.backend`);
  }
  // Jacobian in energy-scaled interface variables y = W^{1/2} T x (Euclidean there ≈ linear energy)
  const J = jacobianOperator(model);
  const sqrtW = Float64Array.from(rest.interfaceForm.weights!, Math.sqrt);
  const tA = new Float64Array(n), tB = new Float64Array(n);
  const to = (out: Float64Array, x: Float64Array) => { rest.toInterface(out, x); for (let q = 0; q < n; q++) out[q] *= sqrtW[q]; };
  const from = (out: Float64Array, y: Float64Array) => { for (let q = 0; q < n; q++) tA[q] = y[q] / sqrtW[q]; rest.fromInterface(out, tA); };
  const scaled: MutableOp = {
    n, counters: J.counters, skew: false,
    apply(out, y) {
      from(tB, y);
      J.apply(tA, tB);
      to(out, tA);
    },
  };
  Object.defineProperty(scaled, "spectralBound", { get: () => J.spectralBound, enumerable: true });
  const inner = createPhiAction(o.backend, scaled, baseOpts(J.spectralBound, o.maxPhi));
  return {
    name: "jacobian", reformed: true, counters: [J.counters],
    prepare: (x) => J.setState(x),
    apply: (out, d) => J.apply(out, d),
    phi: similarityPhi(inner, n, o.maxPhi, to, from),
  };
}

/** Highest φ index a table uses. */
export function tableMaxPhi(t: ExpRkTable): number {
  let p = 1;
  for (const row of [...t.a, t.b]) for (const terms of row) for (const term of terms) p = Math.max(p, term.k);
  return p;
}

interface Group { at: number; withF0: boolean; terms: { j: number; k: number; coef: number }[] }

/** Terms of one row grouped by node fraction; the implied first column c φ1(c z) F0 joins the group at = c. */
function groupRow(row: readonly (readonly { k: number; coef: number; at: number }[])[], c: number): Group[] {
  const groups: Group[] = [];
  const get = (at: number) => {
    let g = groups.find((x) => Math.abs(x.at - at) < 1e-15);
    if (!g) { g = { at, withF0: false, terms: [] }; groups.push(g); }
    return g;
  };
  if (c > 0) get(c).withF0 = true;
  for (let j = 1; j < row.length; j++) for (const t of row[j]) if (t.coef !== 0) get(t.at).terms.push({ j, k: t.k, coef: t.coef });
  return groups.filter((g) => g.withF0 || g.terms.length > 0);
}

export interface ExponentialInfo {
  method: string;
  label: string;
  order: number;
  note?: string;
}

/** The engine: one stepper for any table and linear part. All work arrays are allocated here. */
export function exponentialRk(table: ExpRkTable, model: OdeProblem, lin: LinearPart, info: ExponentialInfo): Stepper {
  checkExpTable(table);
  const n = model.n;
  const s = table.b.length;
  const maxPhi = tableMaxPhi(table);
  const stageGroups = table.a.map((row, i) => (i === 0 ? [] : groupRow(row, table.c[i])));
  const finalGroups = groupRow(table.b, 1);
  const F0 = new Float64Array(n), Fi = new Float64Array(n), U = new Float64Array(n), diff = new Float64Array(n), Ad = new Float64Array(n);
  const tmp = new Float64Array(n);
  const D = Array.from({ length: s }, (_, j) => new Float64Array(j === 0 ? 0 : n));
  const v = Array.from({ length: maxPhi + 1 }, () => new Float64Array(n));
  const stats = emptyStats();
  const base = lin.counters.map((c) => ({ matvecs: c.matvecs, innerProducts: c.innerProducts }));

  function addGroups(target: Float64Array, groups: Group[], h: number): void {
    for (const g of groups) {
      const tau = g.at * h;
      for (let k = 0; k <= maxPhi; k++) v[k].fill(0);
      if (g.withF0) v[1].set(F0);
      for (const t of g.terms) {
        const f = (h * t.coef) / Math.pow(tau, t.k), dj = D[t.j], vk = v[t.k];
        for (let q = 0; q < n; q++) vk[q] += f * dj[q];
      }
      lin.phi.apply(tmp, tau, v);
      for (let q = 0; q < n; q++) target[q] += tmp[q];
    }
  }

  return {
    method: info.method, label: info.label, order: info.order, stats, note: info.note,
    step(x, t, h) {
      lin.prepare(x);
      model.tendency(F0, x, t);
      for (let i = 1; i < s; i++) {
        U.set(x);
        addGroups(U, stageGroups[i], h);
        model.tendency(Fi, U, t + table.c[i] * h);
        for (let q = 0; q < n; q++) diff[q] = U[q] - x[q];
        lin.apply(Ad, diff);
        const Di = D[i];
        for (let q = 0; q < n; q++) Di[q] = Fi[q] - F0[q] - Ad[q];
      }
      addGroups(x, finalGroups, h);
      stats.steps++;
      stats.rhsEvaluations += s + (lin.reformed ? 1 : 0);
      let mv = 0, ip = 0;
      lin.counters.forEach((c, q) => { mv += c.matvecs - base[q].matvecs; ip += c.innerProducts - base[q].innerProducts; });
      stats.matvecs = mv;
      stats.innerProducts = ip;
    },
  };
}

/** Option keys every exponential method takes. */
export const EXPONENTIAL_OPTIONS = ["linear", "backend", "tolerance", "substeps", "filter"] as const;

/** Validate the stepper options of an exponential method and build it (the registry's `create`). */
export function createExponentialStepper(
  table: ExpRkTable, model: ShallowWaterModel, spec: Record<string, unknown>, field = "stepper", method = table.name,
): Stepper {
  const L = model.params.nLayers;
  const linear = spec.linear ?? (table.linearPart === "jacobian" ? "jacobian" : "rest");
  const lin = parseLinearName(linear, L, `${field}.linear`);
  const backend = spec.backend ?? "krylov";
  if (typeof backend !== "string" || !phiBackends.some((b) => b.name === backend)) {
    throw new SolverError("bad-input", `${field}.backend: unknown backend ${JSON.stringify(backend)}; known backends: ${phiBackends.map((b) => b.name).join(", ")}`, `${field}.backend`);
  }
  const tolerance = spec.tolerance ?? 1e-8;
  if (typeof tolerance !== "number" || !Number.isFinite(tolerance) || !(tolerance > 0)) {
    throw new SolverError("bad-input", `${field}.tolerance must be > 0 (a relative tolerance of the φ-actions, e.g. 1e-8), got ${JSON.stringify(tolerance)}`, `${field}.tolerance`);
  }
  if (tolerance >= 1) throw new SolverError("bad-input", `${field}.tolerance must be < 1 (relative), got ${tolerance}`, `${field}.tolerance`);
  const substeps = spec.substeps;
  if (substeps !== undefined && !(typeof substeps === "number" && Number.isInteger(substeps) && substeps >= 0)) {
    throw new SolverError("bad-input", `${field}.substeps must be a whole number ≥ 0 (0 = choose from the spectral bound), got ${JSON.stringify(substeps)}`, `${field}.substeps`);
  }
  const filter = parseFilter(spec.filter, `${field}.filter`);
  const part = buildLinearPart(model, {
    linear: linear as string, backend: backend as PhiBackendName, tolerance, substeps: substeps as number | undefined,
    filter, maxPhi: tableMaxPhi(table), field,
  });
  const fixedRosenbrock = table.linearPart === "jacobian" && lin.kind !== "jacobian";
  const order = fixedRosenbrock ? table.orderWithFixedLinear ?? 1 : table.order;
  const note = fixedRosenbrock
    ? `${method} is an exponential Rosenbrock method built for linear: jacobian; with the fixed linear part ${part.name} its order ` +
      `drops to about ${order} (measured with a fixed operator: about 1, 1 and 2 for exprb2, exprb32 and exprb43)`
    : undefined;
  const opts = [`linear=${part.name}`, `backend=${backend}`, `tol=${tolerance}`];
  if (substeps) opts.push(`substeps=${substeps}`);
  if (filter) opts.push(`filter=${filter.order}`);
  return exponentialRk(table, model, part, { method, label: `${method} (${opts.join(", ")})`, order, note });
}

/** "off" / absent → none; a number → that filter order with κ = 36 at the spectral bound; or { order, strength?, cutoff? }. */
function parseFilter(raw: unknown, field: string): LinearPartOptions["filter"] {
  if (raw === undefined || raw === null || raw === false || raw === "off" || raw === "none" || raw === 0) return undefined;
  if (typeof raw === "number") {
    if (!(Number.isFinite(raw) && raw > 0)) throw new SolverError("bad-input", `${field}: the filter order must be a number > 0 (e.g. 8), got ${raw}`, field);
    return { order: raw };
  }
  if (typeof raw === "object" && !Array.isArray(raw)) {
    const f = raw as Record<string, unknown>;
    for (const key of Object.keys(f)) if (!["order", "strength", "cutoff"].includes(key)) throw new SolverError("bad-input", `${field}.${key}: unknown field (a filter has order, strength, cutoff)`, `${field}.${key}`);
    if (typeof f.order !== "number" || !(f.order > 0)) throw new SolverError("bad-input", `${field}.order must be a number > 0`, `${field}.order`);
    if (f.strength !== undefined && !(typeof f.strength === "number" && f.strength >= 0)) throw new SolverError("bad-input", `${field}.strength must be a number ≥ 0`, `${field}.strength`);
    if (f.cutoff !== undefined && !(typeof f.cutoff === "number" && f.cutoff > 0)) throw new SolverError("bad-input", `${field}.cutoff must be a frequency > 0 [1/s]`, `${field}.cutoff`);
    return { order: f.order, strength: f.strength as number | undefined, cutoff: f.cutoff as number | undefined };
  }
  throw new SolverError("bad-input", `${field}: expected "off", a filter order (e.g. 8) or { "order": 8, "strength": 36, "cutoff": ω_c }, got ${JSON.stringify(raw)}`, field);
}
