import { SolverError } from "../errors.js";
import { basinHexMesh, periodicHexMesh } from "../mesh/hexLattice.js";
import { displacement, skewGradient, vertexToCell } from "../mesh/operators.js";
import type { Mesh } from "../mesh/types.js";
import { layerCoupling } from "../model/modes.js";
import { luSolve } from "../linalg/dense.js";
import { ShallowWaterModel, type ModelParams } from "../model/shallowWater.js";
import { basinShapeOf, type InitialSpec, type MeshSpec, type Scenario } from "./schema.js";
import { LIMITS } from "./limits.js";

/** Build the mesh a scenario describes. */
export function buildMesh(spec: MeshSpec): Mesh {
  if (spec.type === "periodic-hex") {
    return periodicHexMesh({ cellsX: spec.cellsX, cellsY: spec.cellsY, spacing: spec.spacing, jitter: spec.jitter, seed: spec.seed });
  }
  return basinHexMesh(basinShapeOf(spec), spec.spacing, LIMITS.latticePoints);
}

/** Extent of the wet cells [m]. */
export function meshExtent(m: Mesh): { xMin: number; xMax: number; yMin: number; yMax: number; xc: number; yc: number } {
  if (m.kind === "periodic") return { xMin: 0, xMax: m.width, yMin: 0, yMax: m.height, xc: m.width / 2, yc: m.height / 2 };
  let xMin = Infinity; let xMax = -Infinity; let yMin = Infinity; let yMax = -Infinity;
  for (let i = 0; i < m.nCells; i++) {
    xMin = Math.min(xMin, m.cellX[i]); xMax = Math.max(xMax, m.cellX[i]);
    yMin = Math.min(yMin, m.cellY[i]); yMax = Math.max(yMax, m.cellY[i]);
  }
  return { xMin, xMax, yMin, yMax, xc: (xMin + xMax) / 2, yc: (yMin + yMax) / 2 };
}

/** Sea-floor height b at cells [m] (negative below the resting surface). */
function bottomHeight(s: Scenario, m: Mesh): Float64Array {
  const total = s.layers.reduce((a, l) => a + l.thickness, 0);
  const b = new Float64Array(m.nCells).fill(-total);
  const topo = s.physics.topography;
  if (!topo || topo.type === "flat") return b;
  const ext = meshExtent(m);
  for (let i = 0; i < m.nCells; i++) {
    const x = m.cellX[i];
    const y = m.cellY[i];
    if (topo.type === "shelf") {
      const dist = { west: x - ext.xMin, east: ext.xMax - x, south: y - ext.yMin, north: ext.yMax - y }[topo.side];
      const slope = topo.slopeWidth ?? topo.width / 2;
      // depth goes smoothly from the shelf depth to the full depth across the slope
      const frac = 0.5 * (1 + Math.tanh((dist - topo.width) / (0.5 * slope)));
      b[i] = -(topo.depth + (total - topo.depth) * frac);
    } else {
      const [dx, dy] = displacement(m, x, y, topo.x ?? ext.xc, topo.y ?? ext.yc);
      b[i] = -total + topo.height * Math.exp(-(dx * dx + dy * dy) / (topo.radius * topo.radius));
    }
  }
  return b;
}

/** Resolve the scenario's physics onto the mesh. */
export function buildParams(s: Scenario, m: Mesh): ModelParams {
  const L = s.layers.length;
  const g = s.physics.gravity;
  const rho = s.layers.map((l) => l.density);
  const rho0 = rho[0];
  const reducedGravity = new Float64Array(L);
  reducedGravity[0] = g;
  for (let k = 1; k < L; k++) reducedGravity[k] = (g * (rho[k] - rho[k - 1])) / rho0;
  const ext = meshExtent(m);
  const { f0, beta } = s.physics;
  const coriolisVertex = new Float64Array(m.nVertices);
  for (let v = 0; v < m.nVertices; v++) coriolisVertex[v] = f0 + beta * (m.vertexY[v] - ext.yc);
  let windStress: Float64Array | null = null;
  const wind = s.physics.wind;
  if (wind) {
    windStress = new Float64Array(m.nEdges);
    const ly = m.kind === "periodic" ? m.height : ext.yMax - ext.yMin;
    const y0 = m.kind === "periodic" ? 0 : ext.yMin;
    const gyres = wind.type === "zonal-cosine" ? (wind.gyres ?? (m.kind === "periodic" ? 2 : 1)) : 0;
    for (let e = 0; e < m.nEdges; e++) {
      if (!m.edgeOpen[e]) continue;
      let tx: number;
      let ty: number;
      if (wind.type === "zonal-cosine") {
        tx = -wind.amplitude * Math.cos((Math.PI * gyres * (m.edgeY[e] - y0)) / ly);
        ty = 0;
      } else {
        tx = wind.x;
        ty = wind.y;
      }
      windStress[e] = tx * m.edgeNormalX[e] + ty * m.edgeNormalY[e];
    }
  }
  return {
    nLayers: L, gravity: g, densities: rho, rho0, reducedGravity,
    nominalThickness: s.layers.map((l) => l.thickness),
    bottom: bottomHeight(s, m), coriolisVertex, f0, beta, windStress,
    bottomDrag: s.physics.bottomDrag ?? 0,
    viscosity: s.physics.viscosity ?? 0,
    biharmonic: s.physics.biharmonic ?? 0,
  };
}

/** Add a displacement δ of interface k (0 = free surface) to the thicknesses: h_k += δ, h_{k−1} −= δ. */
function displaceInterface(x: Float64Array, nCells: number, k: number, i: number, delta: number): void {
  x[k * nCells + i] += delta;
  if (k > 0) x[(k - 1) * nCells + i] -= delta;
}

/**
 * A discretely balanced state of the linear f-plane system (Thuburn et al. 2009): per layer a streamfunction
 * ψ_k at vertices, u_k = S ψ_k (non-divergent), and the Montgomery anomaly M'_k = f R_{cv} ψ_k, for which
 * f P u_k = G M'_k holds exactly on the mesh; thicknesses follow from h' = 𝒢⁻¹ M'.
 */
function balancedState(x: Float64Array, model: ShallowWaterModel, spec: Extract<InitialSpec, { type: "balanced" }>): void {
  const m = model.mesh;
  const p = model.params;
  const L = p.nLayers;
  const { nCells: nc, nEdges: ne, uOffset } = model.layout;
  if (p.beta !== 0) throw new SolverError("bad-input", "initial.type: a balanced state needs an f-plane (physics.beta = 0)", "initial.type");
  if (p.f0 === 0) throw new SolverError("bad-input", "initial.type: a balanced state needs rotation (physics.f0 ≠ 0)", "initial.type");
  if (p.bottom.some((b) => b !== p.bottom[0])) throw new SolverError("bad-input", "initial.type: a balanced state needs a flat bottom", "initial.type");
  const G = layerCoupling(p.reducedGravity);
  const ext = meshExtent(m);
  const xc = spec.x ?? ext.xc;
  const yc = spec.y ?? ext.yc;
  // thickness anomaly per unit interface displacement, and the Montgomery anomaly it implies (M' = 𝒢 h')
  const hUnit = new Float64Array(L);
  hUnit[spec.interface] = 1;
  if (spec.interface > 0) hUnit[spec.interface - 1] = -1;
  const mUnit = new Float64Array(L);
  for (let k = 0; k < L; k++) for (let j = 0; j < L; j++) mUnit[k] += G[k * L + j] * hUnit[j];
  const psi = new Float64Array(m.nVertices);
  const mCell = new Float64Array(nc);
  const uLayer = new Float64Array(ne);
  const mAll = new Float64Array(L * nc);
  for (let k = 0; k < L; k++) {
    for (let v = 0; v < m.nVertices; v++) {
      const [dx, dy] = displacement(m, m.vertexX[v], m.vertexY[v], xc, yc);
      psi[v] = (mUnit[k] * spec.amplitude * Math.exp(-(dx * dx + dy * dy) / (spec.radius * spec.radius))) / p.f0;
    }
    skewGradient(uLayer, m, psi);
    x.set(uLayer, uOffset + k * ne);
    vertexToCell(mCell, m, psi);
    for (let i = 0; i < nc; i++) mAll[k * nc + i] = p.f0 * mCell[i];
  }
  // h' = 𝒢⁻¹ M' cell by cell (small dense LU solve)
  const A = new Float64Array(L * L);
  const rhs = new Float64Array(L);
  const piv = new Int32Array(L);
  for (let i = 0; i < nc; i++) {
    A.set(G);
    for (let k = 0; k < L; k++) rhs[k] = mAll[k * nc + i];
    luSolve(A, rhs, L, 1, piv);
    for (let k = 0; k < L; k++) x[k * nc + i] += rhs[k];
  }
}

/** The initial state of the scenario (thicknesses and velocities in one state vector). */
export function buildInitialState(s: Scenario, model: ShallowWaterModel): Float64Array {
  const x = model.restState();
  const m = model.mesh;
  const nc = m.nCells;
  const init = s.initial;
  const ext = meshExtent(m);
  switch (init.type) {
    case "rest":
      break;
    case "bump": {
      const xc = init.x ?? ext.xc;
      const yc = init.y ?? ext.yc;
      for (let i = 0; i < nc; i++) {
        const [dx, dy] = displacement(m, m.cellX[i], m.cellY[i], xc, yc);
        displaceInterface(x, nc, init.interface, i, init.amplitude * Math.exp(-(dx * dx + dy * dy) / (init.radius * init.radius)));
      }
      break;
    }
    case "step": {
      const w = init.width ?? 2 * m.spacing;
      const axis = init.axis ?? "x";
      for (let i = 0; i < nc; i++) {
        const [dx, dy] = displacement(m, m.cellX[i], m.cellY[i], ext.xc, ext.yc);
        const sPos = axis === "x" ? dx : dy;
        const shape = 0.5 * (Math.tanh((sPos + init.halfWidth) / w) - Math.tanh((sPos - init.halfWidth) / w));
        displaceInterface(x, nc, init.interface, i, init.amplitude * shape);
      }
      break;
    }
    case "balanced":
      balancedState(x, model, init);
      break;
  }
  return x;
}

export interface BuiltScenario {
  scenario: Scenario;
  mesh: Mesh;
  model: ShallowWaterModel;
  initial: Float64Array;
}

/** Mesh, model and initial state of a validated scenario; thickness problems are reported by field. */
export function buildScenario(s: Scenario): BuiltScenario {
  const mesh = buildMesh(s.mesh);
  const model = new ShallowWaterModel(mesh, buildParams(s, mesh));
  const initial = buildInitialState(s, model);
  const L = s.layers.length;
  for (let k = 0; k < L; k++) {
    let min = Infinity;
    let where = 0;
    for (let i = 0; i < mesh.nCells; i++) if (initial[k * mesh.nCells + i] < min) { min = initial[k * mesh.nCells + i]; where = i; }
    if (!(min > 0)) {
      const field = s.initial.type === "rest" ? "physics.topography" : "initial.amplitude";
      throw new SolverError(
        "bad-input",
        `${field}: layer ${k} (layers[${k}]) would have thickness ${min.toFixed(3)} m at cell ${where} ` +
          `(x = ${(mesh.cellX[where] / 1000).toFixed(1)} km, y = ${(mesh.cellY[where] / 1000).toFixed(1)} km); every layer must stay thicker than 0 m`,
        field,
      );
    }
  }
  return { scenario: s, mesh, model, initial };
}
