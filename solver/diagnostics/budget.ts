import type { ShallowWaterModel } from "../model/shallowWater.js";
import { relativeVorticity } from "../model/terms.js";
import { cellToVertex, tangential } from "../mesh/operators.js";

/** Integral diagnostics of one state (Ringler et al. 2010). Units in the field names' comments. */
export interface Budget {
  /** Volume of each layer Σ A_i h_{k,i} [m³]. */
  mass: number[];
  /** Total energy per unit reference density, kinetic + potential [m⁵/s²]; × ρ0 gives joules. */
  energy: number;
  kinetic: number;
  potential: number;
  /** Potential enstrophy ½ Σ_v A_v h_v q_v² [m/s²]. */
  enstrophy: number;
  /** Smallest layer thickness [m]. */
  minThickness: number;
  /** Largest speed |u| at edges, from normal and reconstructed tangential components [m/s]. */
  maxSpeed: number;
}

export interface BudgetWork {
  eta: Float64Array;
  /** Interface heights of the rest state, layer-major [m]. */
  etaRest: Float64Array;
  vort: Float64Array;
  /** Vertex thickness h_v (kite average) [m]. */
  hVertex: Float64Array;
  tan: Float64Array;
}

export function budgetWork(model: ShallowWaterModel): BudgetWork {
  const { nLayers: L, nCells: nc } = model.layout;
  const rest = model.restState();
  const etaRest = new Float64Array(L * nc);
  for (let i = 0; i < nc; i++) {
    let level = model.params.bottom[i];
    for (let k = L - 1; k >= 0; k--) { level += rest[k * nc + i]; etaRest[k * nc + i] = level; }
  }
  return {
    eta: new Float64Array(nc),
    etaRest,
    vort: new Float64Array(model.mesh.nVertices),
    hVertex: new Float64Array(model.mesh.nVertices),
    tan: new Float64Array(model.mesh.nEdges),
  };
}

/** Per-layer volumes [m³]. */
export function layerMass(model: ShallowWaterModel, x: Float64Array, out: number[] = []): number[] {
  const { nLayers: L, nCells: nc } = model.layout;
  const A = model.mesh.cellArea;
  for (let k = 0; k < L; k++) {
    let s = 0;
    for (let i = 0; i < nc; i++) s += A[i] * x[k * nc + i];
    out[k] = s;
  }
  out.length = L;
  return out;
}

/**
 * E = Σ_k [ Σ_e ½ l_e d_e ĥ_{k,e} u_{k,e}² + Σ_i ½ A_i g'_k (η_{k,i} − η^rest_{k,i})² ] (Ringler et al. 2010):
 * since every layer's volume is conserved, the available potential energy differs from Σ ½ A g' η² by a constant,
 * and measuring it from the rest state keeps its digits.
 */
export function totalEnergy(model: ShallowWaterModel, x: Float64Array, w: BudgetWork): { kinetic: number; potential: number } {
  const m = model.mesh;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset } = model.layout;
  const g = model.params.reducedGravity;
  const b = model.params.bottom;
  let kinetic = 0;
  let potential = 0;
  w.eta.set(b);
  for (let k = L - 1; k >= 0; k--) {
    for (let i = 0; i < nc; i++) {
      w.eta[i] += x[k * nc + i];
      const d = w.eta[i] - w.etaRest[k * nc + i];
      potential += 0.5 * m.cellArea[i] * g[k] * d * d;
    }
  }
  for (let k = 0; k < L; k++) {
    for (let e = 0; e < ne; e++) {
      const c1 = m.edgeCells[2 * e];
      const c2 = m.edgeCells[2 * e + 1];
      if (c2 < 0) continue;
      const he = 0.5 * (x[k * nc + c1] + x[k * nc + c2]);
      const u = x[uOffset + k * ne + e];
      kinetic += 0.5 * m.edgeLength[e] * m.edgeCellDistance[e] * he * u * u;
    }
  }
  return { kinetic, potential };
}

export function computeBudget(model: ShallowWaterModel, x: Float64Array, w: BudgetWork): Budget {
  const m = model.mesh;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset } = model.layout;
  const { kinetic, potential } = totalEnergy(model, x, w);
  let minThickness = Infinity;
  for (let q = 0; q < uOffset; q++) if (x[q] < minThickness) minThickness = x[q];
  let maxSpeed = 0;
  let enstrophy = 0;
  const f = model.params.coriolisVertex;
  for (let k = 0; k < L; k++) {
    const uOff = uOffset + k * ne;
    // tangential component from the TRiSK reconstruction
    tangential(w.tan, m, x, 0, uOff);
    for (let e = 0; e < ne; e++) {
      const un = x[uOff + e];
      const s = Math.sqrt(un * un + w.tan[e] * w.tan[e]);
      if (s > maxSpeed) maxSpeed = s;
    }
    relativeVorticity(w.vort, m, x, uOff);
    cellToVertex(w.hVertex, m, x, 0, k * nc);
    for (let v = 0; v < m.nVertices; v++) {
      const hv = w.hVertex[v];
      const q = (w.vort[v] + f[v]) / hv;
      enstrophy += 0.5 * m.vertexArea[v] * hv * q * q;
    }
  }
  return { mass: layerMass(model, x), energy: kinetic + potential, kinetic, potential, enstrophy, minThickness, maxSpeed };
}

/** Courant numbers c Δt/d for the fastest and first baroclinic gravity waves and for advection. */
export interface CourantNumbers {
  barotropic: number;
  baroclinic: number;
  advection: number;
}

export function courantNumbers(speeds: readonly number[], maxSpeed: number, dt: number, spacing: number): CourantNumbers {
  return {
    barotropic: (speeds[0] * dt) / spacing,
    baroclinic: ((speeds[1] ?? 0) * dt) / spacing,
    advection: (maxSpeed * dt) / spacing,
  };
}
