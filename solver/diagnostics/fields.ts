import type { ShallowWaterModel } from "../model/shallowWater.js";
import { kineticEnergy, relativeVorticity } from "../model/terms.js";
import { vertexToCell } from "../mesh/operators.js";

/**
 * Cell fields for the map: pure functions of one state vector (layout of solver/model/shallowWater.ts:
 * x[k·nCells + i] = h_k at cell i, x[L·nCells + k·nEdges + e] = u_k at edge e). Each writes one value per cell
 * into the array it is given and allocates nothing; work arrays come from `fieldWork`, built once per model.
 */

export type FieldKind = "surface" | "interface" | "thickness" | "vorticity" | "speed" | "kinetic";

export interface FieldInfo {
  readonly kind: FieldKind;
  readonly label: string;
  readonly unit: string;
  /** True when the field belongs to one layer (the map then offers a layer picker). */
  readonly perLayer: boolean;
  /** "diverging" for anomalies around zero, "sequential" for magnitudes. */
  readonly scale: "diverging" | "sequential";
  readonly description: string;
}

export const FIELDS: readonly FieldInfo[] = [
  { kind: "surface", label: "Free-surface height", unit: "m", perLayer: false, scale: "diverging",
    description: "η₀ = b + Σ h_k, height of the sea surface above its resting level" },
  { kind: "interface", label: "Interface displacement", unit: "m", perLayer: true, scale: "diverging",
    description: "η_k − η_k(rest), rise of the top of the chosen layer above its resting height (layer 0: the free surface)" },
  { kind: "thickness", label: "Layer thickness", unit: "m", perLayer: true, scale: "sequential",
    description: "h_k, thickness of the chosen layer" },
  { kind: "vorticity", label: "Relative vorticity", unit: "1/s", perLayer: true, scale: "diverging",
    description: "ζ = curl u at the dual vertices, averaged to cells with kite weights" },
  { kind: "speed", label: "Speed", unit: "m/s", perLayer: true, scale: "sequential",
    description: "√(2K), the cell speed implied by the kinetic energy K (exact for a uniform flow)" },
  { kind: "kinetic", label: "Kinetic energy", unit: "m²/s²", perLayer: true, scale: "sequential",
    description: "K = (1/4A) Σ l_e d_e u_e², kinetic energy per unit mass at cells" },
];

export function fieldInfo(kind: FieldKind): FieldInfo {
  const f = FIELDS.find((x) => x.kind === kind);
  if (!f) throw new Error(`unknown field kind ${String(kind)}`);
  return f;
}

export type CellValues = Float32Array | Float64Array;

export interface FieldWork {
  /** Running interface height while summing the column [m], per cell. */
  readonly level: Float64Array;
  /** Interface heights of the rest state, layer-major [m]. */
  readonly restLevel: Float64Array;
  /** Relative vorticity at vertices [1/s]. */
  readonly vorticity: Float64Array;
  /** Per-cell scratch (vorticity averaged to cells, kinetic energy). */
  readonly cell: Float64Array;
}

export function fieldWork(model: ShallowWaterModel): FieldWork {
  const { nLayers: L, nCells: nc } = model.layout;
  const rest = model.restState();
  const restLevel = new Float64Array(L * nc);
  interfaceHeights(restLevel, model, rest);
  return {
    level: new Float64Array(nc), restLevel,
    vorticity: new Float64Array(model.mesh.nVertices), cell: new Float64Array(nc),
  };
}

/** All interface heights η_k = b + Σ_{j≥k} h_j, layer-major into `out` (length L·nCells) [m]. */
export function interfaceHeights(out: Float64Array, model: ShallowWaterModel, x: Float64Array): void {
  const { nLayers: L, nCells: nc } = model.layout;
  const b = model.params.bottom;
  for (let i = 0; i < nc; i++) {
    let level = b[i];
    for (let k = L - 1; k >= 0; k--) { level += x[k * nc + i]; out[k * nc + i] = level; }
  }
}

/** η₀ = b + Σ_k h_k, the free surface relative to the resting level z = 0 [m]. */
export function surfaceHeight(out: CellValues, model: ShallowWaterModel, x: Float64Array): void {
  const { nLayers: L, nCells: nc } = model.layout;
  const b = model.params.bottom;
  for (let i = 0; i < nc; i++) {
    let level = b[i];
    for (let k = 0; k < L; k++) level += x[k * nc + i];
    out[i] = level;
  }
}

/** η_k − η_k(rest): displacement of the top of layer k (k = 0 is the free surface) [m]. */
export function interfaceDisplacement(out: CellValues, model: ShallowWaterModel, x: Float64Array, layer: number, w: FieldWork): void {
  const { nLayers: L, nCells: nc } = model.layout;
  w.level.set(model.params.bottom);
  for (let k = L - 1; k >= layer; k--) for (let i = 0; i < nc; i++) w.level[i] += x[k * nc + i];
  for (let i = 0; i < nc; i++) out[i] = w.level[i] - w.restLevel[layer * nc + i];
}

/** h_k at cells [m]. */
export function layerThickness(out: CellValues, model: ShallowWaterModel, x: Float64Array, layer: number): void {
  const nc = model.layout.nCells;
  for (let i = 0; i < nc; i++) out[i] = x[layer * nc + i];
}

/** Relative vorticity of layer k at vertices, averaged to cells with the kite weights R_iv [1/s]. */
export function cellVorticity(out: CellValues, model: ShallowWaterModel, x: Float64Array, layer: number, w: FieldWork): void {
  const { uOffset, nEdges: ne, nCells: nc } = model.layout;
  relativeVorticity(w.vorticity, model.mesh, x, uOffset + layer * ne);
  vertexToCell(w.cell, model.mesh, w.vorticity);
  for (let i = 0; i < nc; i++) out[i] = w.cell[i];
}

/** Kinetic energy per unit mass K_i = (1/4A_i) Σ l_e d_e u_e² of layer k [m²/s²]. */
export function cellKineticEnergy(out: CellValues, model: ShallowWaterModel, x: Float64Array, layer: number, w: FieldWork): void {
  const { uOffset, nEdges: ne, nCells: nc } = model.layout;
  kineticEnergy(w.cell, model.mesh, x, uOffset + layer * ne);
  for (let i = 0; i < nc; i++) out[i] = w.cell[i];
}

/** Speed √(2 K_i) of layer k [m/s]: on a regular hexagon a uniform flow U gives K = U²/2, so this is U. */
export function cellSpeed(out: CellValues, model: ShallowWaterModel, x: Float64Array, layer: number, w: FieldWork): void {
  const { uOffset, nEdges: ne, nCells: nc } = model.layout;
  kineticEnergy(w.cell, model.mesh, x, uOffset + layer * ne);
  for (let i = 0; i < nc; i++) out[i] = Math.sqrt(2 * w.cell[i]);
}

export interface FieldRange {
  min: number;
  max: number;
}

/** Smallest and largest finite value of a cell field (NaN, NaN if there is none). */
export function fieldRange(values: CellValues, n = values.length): FieldRange {
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (v < min) min = v;
    if (v > max) max = v;
  }
  return min <= max ? { min, max } : { min: NaN, max: NaN };
}

/** Fill `out` (length nCells) with the chosen field of layer `layer` and return its range. */
export function computeField(
  out: CellValues, kind: FieldKind, layer: number, model: ShallowWaterModel, x: Float64Array, w: FieldWork,
): FieldRange {
  const k = Math.min(Math.max(0, Math.trunc(layer)), model.layout.nLayers - 1);
  switch (kind) {
    case "surface": surfaceHeight(out, model, x); break;
    case "interface": interfaceDisplacement(out, model, x, k, w); break;
    case "thickness": layerThickness(out, model, x, k); break;
    case "vorticity": cellVorticity(out, model, x, k, w); break;
    case "speed": cellSpeed(out, model, x, k, w); break;
    case "kinetic": cellKineticEnergy(out, model, x, k, w); break;
  }
  return fieldRange(out, model.layout.nCells);
}

/**
 * Cell outlines and coastline for drawing. Polygon vertex positions are the cell centre plus the minimal-image
 * displacement to each vertex, so cells on a periodic seam stay whole (they may reach past the domain edge).
 */
export interface CellOutlines {
  readonly kind: "periodic" | "basin";
  readonly nCells: number;
  /** Periodic domain size [m] (the drawing shows one period). */
  readonly width: number;
  readonly height: number;
  /** Extent of the drawing [m]: the periodic domain, or the bounding box of the basin's cell outlines. */
  readonly xMin: number; readonly xMax: number; readonly yMin: number; readonly yMax: number;
  /** CSR offsets into `vertexXY` (in vertices), length nCells + 1. */
  readonly offset: Int32Array;
  /** Vertex positions (x, y) of each cell outline, counter-clockwise [m]. */
  readonly vertexXY: Float64Array;
  readonly cellX: Float64Array;
  readonly cellY: Float64Array;
  /** Coastline segments (x1, y1, x2, y2) [m], one per edge with no cell on its far side. */
  readonly coast: Float64Array;
}

export function cellOutlines(mesh: ShallowWaterModel["mesh"]): CellOutlines {
  const { nCells, cellEdgeOffset: off, cellVertexIndex: vi, vertexX, vertexY, cellX, cellY } = mesh;
  const periodic = mesh.kind === "periodic";
  const vertexXY = new Float64Array(2 * off[nCells]);
  let xMin = Infinity; let xMax = -Infinity; let yMin = Infinity; let yMax = -Infinity;
  for (let i = 0; i < nCells; i++) {
    for (let q = off[i]; q < off[i + 1]; q++) {
      let dx = vertexX[vi[q]] - cellX[i];
      let dy = vertexY[vi[q]] - cellY[i];
      if (periodic) { dx -= mesh.width * Math.round(dx / mesh.width); dy -= mesh.height * Math.round(dy / mesh.height); }
      const px = cellX[i] + dx;
      const py = cellY[i] + dy;
      vertexXY[2 * q] = px; vertexXY[2 * q + 1] = py;
      if (px < xMin) xMin = px; if (px > xMax) xMax = px;
      if (py < yMin) yMin = py; if (py > yMax) yMax = py;
    }
  }
  if (periodic) { xMin = 0; xMax = mesh.width; yMin = 0; yMax = mesh.height; }
  let nCoast = 0;
  for (let e = 0; e < mesh.nEdges; e++) if (mesh.edgeCells[2 * e + 1] < 0) nCoast++;
  const coast = new Float64Array(4 * nCoast);
  for (let e = 0, c = 0; e < mesh.nEdges; e++) {
    if (mesh.edgeCells[2 * e + 1] >= 0) continue;
    const v1 = mesh.edgeVertices[2 * e];
    const v2 = mesh.edgeVertices[2 * e + 1];
    coast[c++] = vertexX[v1]; coast[c++] = vertexY[v1]; coast[c++] = vertexX[v2]; coast[c++] = vertexY[v2];
  }
  return {
    kind: mesh.kind, nCells, width: mesh.width, height: mesh.height, xMin, xMax, yMin, yMax,
    offset: Int32Array.from(off), vertexXY, cellX: Float64Array.from(cellX), cellY: Float64Array.from(cellY), coast,
  };
}
