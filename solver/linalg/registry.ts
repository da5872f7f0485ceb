/**
 * The φ-backend registry: one factory per name, option checks at the boundary (Hochbruck & Lubich 1997; Al-Mohy & Higham 2011; Tal-Ezer & Kosloff 1984).
 */
import { SolverError, badInput } from "../errors.js";
import type { LinearOperator, PhiAction, PhiBackendName, PhiOptions } from "./types.js";
import { densePhi } from "./dense.js";
import { krylovPhi } from "./krylov.js";
import { taylorPhi } from "./taylor.js";
import { chebyshevPhi } from "./chebyshev.js";
import { substepPhi } from "./substep.js";
import { rationalPhi } from "./rational.js";
import { rationalDampedPhi } from "./rationalDamped.js";
import { estimateSpectralBound } from "./spectralBound.js";

export interface PhiBackendInfo {
  readonly name: PhiBackendName;
  readonly description: string;
}

export const phiBackends: readonly PhiBackendInfo[] = [
  { name: "krylov", description: "Lanczos/Arnoldi in the energy inner product with a-posteriori error control and time sub-steps" },
  { name: "taylor", description: "truncated Taylor series with scaling (Al-Mohy & Higham 2011); needs only a norm bound" },
  { name: "chebyshev", description: "Chebyshev/Bessel expansion for spectra in i[-rho, rho]; needs spectralBound; supports the filter" },
  { name: "substep", description: "RK4 sub-steps of the polynomial-forced linear ODE (split-explicit analogue); no inner products" },
  { name: "rational", description: "elliptic-contour quadrature, hρ-proportional poles; a cached sparse complex factorization per pole on a fixed linear part (memory grows with hρ, bounded), GMRES solves otherwise (small problems only); skew operators" },
  { name: "rational-damped", description: "non-resolving: waves below filter.cutoff kept to the tolerance, faster ones damped, by Lanczos on (I − c²A²)⁻¹ with two cached sparse factorizations; cost does not grow with hρ; needs a fixed skew linear part and filter { cutoff }" },
  { name: "dense", description: "augmented-matrix exponential of the assembled matrix (Al-Mohy & Higham 2011, Thm 2.1); tests only" },
];

function isBackend(name: string): name is PhiBackendName {
  return phiBackends.some((b) => b.name === name);
}

/** Build a φ-action; throws SolverError("bad-input") naming the offending field for bad options. */
export function createPhiAction(backend: PhiBackendName, op: LinearOperator, opts: PhiOptions): PhiAction {
  const pf = opts.field ?? "phi";
  if (!isBackend(backend)) {
    throw badInput(`${pf}.backend`, `unknown phi backend "${String(backend)}" (expected one of ${phiBackends.map((b) => b.name).join(", ")})`);
  }
  if (!(typeof opts.tol === "number" && Number.isFinite(opts.tol) && opts.tol > 0)) {
    throw badInput(`${pf}.tolerance`, `tolerance must be a positive number, got ${String(opts.tol)}`);
  }
  if (!(Number.isInteger(opts.maxPhi) && opts.maxPhi >= 0)) {
    throw badInput(`${pf}.maxPhi`, `maxPhi must be a non-negative integer, got ${String(opts.maxPhi)}`);
  }
  if (opts.substeps !== undefined && !(Number.isInteger(opts.substeps) && opts.substeps >= 0)) {
    throw badInput(`${pf}.substeps`, `substeps must be a non-negative integer, got ${String(opts.substeps)}`);
  }
  if (opts.maxKrylovDim !== undefined && !(Number.isInteger(opts.maxKrylovDim) && opts.maxKrylovDim >= 1)) {
    throw badInput(`${pf}.maxKrylovDim`, `maxKrylovDim must be a positive integer, got ${String(opts.maxKrylovDim)}`);
  }
  if (opts.filter) {
    const f = opts.filter;
    if (backend !== "chebyshev" && backend !== "rational-damped") throw badInput(`${pf}.filter`, `the filter is supported by the chebyshev and rational-damped backends only, not "${backend}"`);
    if (!(f.cutoff > 0 && Number.isFinite(f.cutoff))) throw badInput(`${pf}.filter.cutoff`, `cutoff must be > 0 1/s, got ${f.cutoff}`);
    if (!(f.order > 0 && Number.isFinite(f.order))) throw badInput(`${pf}.filter.order`, `order must be > 0, got ${f.order}`);
    if (!(f.strength >= 0 && Number.isFinite(f.strength))) throw badInput(`${pf}.filter.strength`, `strength must be ≥ 0, got ${f.strength}`);
  }
  const bound = op.spectralBound;
  const hasBound = bound !== undefined && Number.isFinite(bound) && bound > 0;
  switch (backend) {
    case "krylov":
      return krylovPhi(op, opts);
    case "taylor":
      // without a bound, estimate it once (power iteration; a rough norm estimate for non-normal A)
      return taylorPhi(op, { ...opts, normBound: hasBound ? bound : estimateSpectralBound(op, { margin: 0.1 }).bound });
    case "chebyshev":
      if (!hasBound || !op.skew) throw badInput(`${pf}.backend`, "chebyshev needs an operator with skew = true and a spectralBound");
      return chebyshevPhi(op, opts);
    case "substep":
      if (!hasBound && !(opts.substeps && opts.substeps > 0)) throw badInput(`${pf}.backend`, "substep needs a spectralBound or a positive substeps count");
      return substepPhi(op, opts);
    case "rational":
      if (!hasBound || !op.skew) throw badInput(`${pf}.backend`, "rational needs an operator with skew = true and a spectralBound");
      return rationalPhi(op, opts);
    case "rational-damped":
      return rationalDampedPhi(op, opts);
    case "dense":
      if (op.n > 2000) throw badInput(`${pf}.backend`, `dense backend is for small operators, n = ${op.n}`);
      return densePhi(op, opts);
  }
  throw new SolverError("bad-input", `${pf}.backend: unhandled backend ${String(backend)}`, `${pf}.backend`);
}

/**
 * The φ filter option of a stepper: "off" / absent → none; a number → that filter order with κ = 36 at the spectral bound; or { order, strength?, cutoff? }.
 */
export function parsePhiFilter(raw: unknown, field: string): { order: number; strength?: number; cutoff?: number } | undefined {
  if (raw === undefined || raw === null || raw === false || raw === "off" || raw === "none" || raw === 0) return undefined;
  if (typeof raw === "number") {
    if (!(Number.isFinite(raw) && raw > 0)) throw new SolverError("bad-input", `${field}: the filter order must be a number > 0 (e.g. 8), got ${raw}`, field);
    return { order: raw };
  }
  if (typeof raw === "string" && raw.trim() !== "" && Number.isFinite(Number(raw))) return parsePhiFilter(Number(raw), field);
  if (typeof raw === "object" && !Array.isArray(raw)) {
    const f = raw as Record<string, unknown>;
    for (const key of Object.keys(f)) if (!["order", "strength", "cutoff"].includes(key)) throw new SolverError("bad-input", `${field}.${key}: unknown field (a filter has order, strength, cutoff)`, `${field}.${key}`);
    if (typeof f.order !== "number" || !(f.order > 0) || !Number.isFinite(f.order)) throw new SolverError("bad-input", `${field}.order must be a number > 0`, `${field}.order`);
    if (f.strength !== undefined && !(typeof f.strength === "number" && f.strength >= 0 && Number.isFinite(f.strength))) throw new SolverError("bad-input", `${field}.strength must be a number ≥ 0`, `${field}.strength`);
    if (f.cutoff !== undefined && !(typeof f.cutoff === "number" && f.cutoff > 0 && Number.isFinite(f.cutoff))) throw new SolverError("bad-input", `${field}.cutoff must be a frequency > 0 [1/s]`, `${field}.cutoff`);
    return { order: f.order, strength: f.strength as number | undefined, cutoff: f.cutoff as number | undefined };
  }
  throw new SolverError("bad-input", `${field}: expected "off", a filter order (e.g. 8) or { "order": 8, "strength": 36, "cutoff": ω_c }, got ${JSON.stringify(raw)}`, field);
}

