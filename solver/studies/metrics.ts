import type { ShallowWaterModel } from "../model/shallowWater.js";

/** Relative errors of a state against a reference, each an area-weighted L2 norm ratio (see `stateErrors`). */
export interface StateErrors {
  /** Free-surface height η₁ = b + Σ_k h_k. */
  surface: number;
  /** All layer thicknesses together. */
  thickness: number;
  /** All normal velocities together. */
  velocity: number;
}

export interface LayerErrors {
  thickness: number[];
  velocity: number[];
}

export type ErrorComponent = keyof StateErrors;
export const ERROR_COMPONENTS: readonly ErrorComponent[] = ["surface", "thickness", "velocity"];

/**
 * Errors of x against the reference xr:
 *   e_ssh = ‖η(x) − η(xr)‖ / ‖η(xr) − η_rest‖,  e_h = ‖h − h_r‖ / ‖h_r − h_rest‖,  e_u = ‖u − u_r‖ / ‖u_r‖,
 * with ‖a‖² = Σ_i A_i a_i² on cells (A_i the cell area) and Σ_e ½ l_e d_e a_e² on edges (the TRiSK edge area).
 * Per-layer errors use each layer's own reference norm. If a reference norm is zero the absolute norm is returned.
 */
export function stateErrors(model: ShallowWaterModel, x: Float64Array, xr: Float64Array, rest: Float64Array): { errors: StateErrors; layers: LayerErrors } {
  const m = model.mesh;
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset } = model.layout;
  const b = model.params.bottom;
  let surfD = 0; let surfR = 0;
  let hD = 0; let hR = 0;
  let uD = 0; let uR = 0;
  const lhD = new Array<number>(L).fill(0); const lhR = new Array<number>(L).fill(0);
  const luD = new Array<number>(L).fill(0); const luR = new Array<number>(L).fill(0);
  for (let i = 0; i < nc; i++) {
    const A = m.cellArea[i];
    let eta = b[i]; let etaR = b[i]; let eta0 = b[i];
    for (let k = 0; k < L; k++) {
      const q = k * nc + i;
      eta += x[q]; etaR += xr[q]; eta0 += rest[q];
      const d = x[q] - xr[q];
      const r = xr[q] - rest[q];
      lhD[k] += A * d * d; lhR[k] += A * r * r;
    }
    surfD += A * (eta - etaR) ** 2;
    surfR += A * (etaR - eta0) ** 2;
  }
  for (let e = 0; e < ne; e++) {
    const w = 0.5 * m.edgeLength[e] * m.edgeCellDistance[e];
    for (let k = 0; k < L; k++) {
      const q = uOffset + k * ne + e;
      const d = x[q] - xr[q];
      luD[k] += w * d * d; luR[k] += w * xr[q] * xr[q];
    }
  }
  for (let k = 0; k < L; k++) { hD += lhD[k]; hR += lhR[k]; uD += luD[k]; uR += luR[k]; }
  const ratio = (d: number, r: number) => (r > 0 ? Math.sqrt(d / r) : Math.sqrt(d));
  return {
    errors: { surface: ratio(surfD, surfR), thickness: ratio(hD, hR), velocity: ratio(uD, uR) },
    layers: { thickness: lhD.map((d, k) => ratio(d, lhR[k])), velocity: luD.map((d, k) => ratio(d, luR[k])) },
  };
}
