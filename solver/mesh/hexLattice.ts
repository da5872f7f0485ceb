import { SolverError } from "../errors.js";
import type { Mesh } from "./types.js";

/**
 * Builder for meshes cut from a triangular lattice of Voronoi generators (Thuburn et al. 2009):
 * generator (a, b) sits at ((a + (b mod 2)/2) d, b (√3/2) d) on an nx × ny torus (ny even).
 * Each generator has six neighbours in counter-clockwise order E, NE, NW, W, SW, SE; it owns the edges
 * towards E, NE, NW and the two dual triangles {p, E, NE} and {p, NE, NW}.
 * Geometry is computed in each cell's own unwrapped frame, so periodic wrap never enters a length or area.
 */

const SQRT3_2 = Math.sqrt(3) / 2;
const DIRECTION_ANGLES = [0, 1, 2, 3, 4, 5].map((j) => (j * Math.PI) / 3);

interface Lattice {
  nx: number;
  ny: number;
  spacing: number;
  /** Generator offsets from the ideal lattice point [m], 2 per generator. */
  jitter: Float64Array;
  originX: number;
  originY: number;
}

function neighbour(L: Lattice, p: number, dir: number): number {
  const a = p % L.nx;
  const b = (p - a) / L.nx;
  const odd = b & 1;
  let da = 0;
  let db = 0;
  switch (dir) {
    case 0: da = 1; break; // E
    case 1: da = odd; db = 1; break; // NE
    case 2: da = odd - 1; db = 1; break; // NW
    case 3: da = -1; break; // W
    case 4: da = odd - 1; db = -1; break; // SW
    case 5: da = odd; db = -1; break; // SE
  }
  const an = (a + da + L.nx) % L.nx;
  const bn = (b + db + L.ny) % L.ny;
  return bn * L.nx + an;
}

/** Edge id of the edge of p towards `dir`, and whether p is its first cell. */
function edgeOf(L: Lattice, p: number, dir: number): [number, number] {
  if (dir < 3) return [3 * p + dir, 1];
  return [3 * neighbour(L, p, dir) + (dir - 3), -1];
}

/** Triangle id of the dual triangle between directions dir and dir+1 of p. */
function triangleOf(L: Lattice, p: number, dir: number): number {
  switch (dir) {
    case 0: return 2 * p;
    case 1: return 2 * p + 1;
    case 2: return 2 * neighbour(L, p, 3);
    case 3: return 2 * neighbour(L, p, 4) + 1;
    case 4: return 2 * neighbour(L, p, 4);
    default: return 2 * neighbour(L, p, 5) + 1;
  }
}

function idealPosition(L: Lattice, p: number): [number, number] {
  const a = p % L.nx;
  const b = (p - a) / L.nx;
  return [L.originX + (a + 0.5 * (b & 1)) * L.spacing, L.originY + b * SQRT3_2 * L.spacing];
}

/** Circumcentre of (0,0), (bx,by), (cx,cy). */
function circumcentre(bx: number, by: number, cx: number, cy: number): [number, number] {
  const dd = 2 * (bx * cy - by * cx);
  const b2 = bx * bx + by * by;
  const c2 = cx * cx + cy * cy;
  return [(cy * b2 - by * c2) / dd, (bx * c2 - cx * b2) / dd];
}

function wrap(v: number, period: number): number {
  const r = v % period;
  return r < 0 ? r + period : r;
}

/**
 * Build the mesh of the wet generators of a lattice. `wet` = null means every generator (periodic torus).
 */
function buildFromLattice(L: Lattice, wet: Uint8Array | null, kind: Mesh["kind"]): Mesh {
  const nGen = L.nx * L.ny;
  const width = L.nx * L.spacing;
  const height = L.ny * SQRT3_2 * L.spacing;
  const isWet = (p: number) => (wet ? wet[p] === 1 : true);

  // --- numbering: wet cells, edges touching a wet cell, triangles touching a wet cell
  const cellId = new Int32Array(nGen).fill(-1);
  let nCells = 0;
  for (let p = 0; p < nGen; p++) if (isWet(p)) cellId[p] = nCells++;
  const edgeId = new Int32Array(3 * nGen).fill(-1);
  const triId = new Int32Array(2 * nGen).fill(-1);
  let nEdges = 0;
  let nVertices = 0;
  for (let p = 0; p < nGen; p++) {
    if (!isWet(p)) continue;
    for (let j = 0; j < 6; j++) {
      const [eg] = edgeOf(L, p, j);
      if (edgeId[eg] < 0) edgeId[eg] = nEdges++;
      const tg = triangleOf(L, p, j);
      if (triId[tg] < 0) triId[tg] = nVertices++;
    }
  }

  const cellX = new Float64Array(nCells);
  const cellY = new Float64Array(nCells);
  const cellArea = new Float64Array(nCells);
  const cellEdgeOffset = new Int32Array(nCells + 1);
  for (let i = 0; i < nCells; i++) cellEdgeOffset[i + 1] = 6 * (i + 1);
  const cellEdgeIndex = new Int32Array(6 * nCells);
  const cellEdgeSign = new Float64Array(6 * nCells);
  const cellVertexIndex = new Int32Array(6 * nCells);
  const cellNeighbor = new Int32Array(6 * nCells);
  const cellKiteArea = new Float64Array(6 * nCells);

  const edgeX = new Float64Array(nEdges);
  const edgeY = new Float64Array(nEdges);
  const edgeNormalX = new Float64Array(nEdges);
  const edgeNormalY = new Float64Array(nEdges);
  const edgeCells = new Int32Array(2 * nEdges).fill(-1);
  const edgeVertices = new Int32Array(2 * nEdges).fill(-1);
  const edgeLength = new Float64Array(nEdges);
  const edgeCellDistance = new Float64Array(nEdges);
  const edgeOpen = new Uint8Array(nEdges);
  const edgeDone = new Uint8Array(nEdges);

  const vertexX = new Float64Array(nVertices);
  const vertexY = new Float64Array(nVertices);
  const vertexArea = new Float64Array(nVertices);
  const vertexCells = new Int32Array(3 * nVertices).fill(-1);
  const vertexEdges = new Int32Array(3 * nVertices).fill(-1);
  const vertexEdgeSign = new Float64Array(3 * nVertices);
  const vertexKiteArea = new Float64Array(3 * nVertices);
  const vertexFill = new Uint8Array(nVertices);
  const vertexDone = new Uint8Array(nVertices);

  const nbrX = new Float64Array(6);
  const nbrY = new Float64Array(6);
  const vx = new Float64Array(6);
  const vy = new Float64Array(6);

  for (let p = 0; p < nGen; p++) {
    const i = cellId[p];
    if (i < 0) continue;
    const [ix, iy] = idealPosition(L, p);
    const jx = L.jitter[2 * p];
    const jy = L.jitter[2 * p + 1];
    const px = ix + jx;
    const py = iy + jy;
    cellX[i] = kind === "periodic" ? wrap(px, width) : px;
    cellY[i] = kind === "periodic" ? wrap(py, height) : py;
    // neighbour positions relative to this generator, in its unwrapped frame
    for (let j = 0; j < 6; j++) {
      const q = neighbour(L, p, j);
      nbrX[j] = L.spacing * Math.cos(DIRECTION_ANGLES[j]) + L.jitter[2 * q] - jx;
      nbrY[j] = L.spacing * Math.sin(DIRECTION_ANGLES[j]) + L.jitter[2 * q + 1] - jy;
    }
    // vertices j between directions j and j+1, relative to the generator
    for (let j = 0; j < 6; j++) {
      const [cx, cy] = circumcentre(nbrX[j], nbrY[j], nbrX[(j + 1) % 6], nbrY[(j + 1) % 6]);
      vx[j] = cx;
      vy[j] = cy;
    }
    let area = 0;
    for (let j = 0; j < 6; j++) {
      const slot = 6 * i + j;
      const q = neighbour(L, p, j);
      const [eg, sign] = edgeOf(L, p, j);
      const e = edgeId[eg];
      cellEdgeIndex[slot] = e;
      cellEdgeSign[slot] = sign;
      cellNeighbor[slot] = cellId[q];
      const v = triId[triangleOf(L, p, j)];
      cellVertexIndex[slot] = v;
      // kite (x_i, p_e_j, x_v, p_e_{j+1}) by the shoelace formula
      const ax = 0.5 * nbrX[j];
      const ay = 0.5 * nbrY[j];
      const bx = 0.5 * nbrX[(j + 1) % 6];
      const by = 0.5 * nbrY[(j + 1) % 6];
      const kite = 0.5 * (ax * vy[j] - vx[j] * ay + (vx[j] * by - bx * vy[j]));
      cellKiteArea[slot] = kite;
      area += kite;
      // edge geometry, from the first wet cell that reaches it (in its own frame)
      if (!edgeDone[e]) {
        edgeDone[e] = 1;
        const dist = Math.hypot(nbrX[j], nbrY[j]);
        const nxv = (sign * nbrX[j]) / dist;
        const nyv = (sign * nbrY[j]) / dist;
        edgeNormalX[e] = nxv;
        edgeNormalY[e] = nyv;
        edgeCellDistance[e] = dist;
        const mx = px + 0.5 * nbrX[j];
        const my = py + 0.5 * nbrY[j];
        edgeX[e] = kind === "periodic" ? wrap(mx, width) : mx;
        edgeY[e] = kind === "periodic" ? wrap(my, height) : my;
        const jm = (j + 5) % 6; // vertex before edge j
        edgeLength[e] = Math.hypot(vx[j] - vx[jm], vy[j] - vy[jm]);
        const vBefore = triId[triangleOf(L, p, jm)];
        // v2 - v1 must be along t = k × n; from this cell, vertex j lies along +t of its outward normal
        if (sign > 0) {
          edgeVertices[2 * e] = vBefore;
          edgeVertices[2 * e + 1] = v;
        } else {
          edgeVertices[2 * e] = v;
          edgeVertices[2 * e + 1] = vBefore;
        }
        const c1 = sign > 0 ? i : cellId[q];
        const c2 = sign > 0 ? cellId[q] : i;
        // coastline edges: keep the wet cell first so the normal points outwards
        if (c1 < 0) {
          edgeCells[2 * e] = c2;
          edgeCells[2 * e + 1] = -1;
          edgeNormalX[e] = -nxv;
          edgeNormalY[e] = -nyv;
          const t = edgeVertices[2 * e];
          edgeVertices[2 * e] = edgeVertices[2 * e + 1];
          edgeVertices[2 * e + 1] = t;
        } else {
          edgeCells[2 * e] = c1;
          edgeCells[2 * e + 1] = c2;
        }
        edgeOpen[e] = c1 >= 0 && c2 >= 0 ? 1 : 0;
      }
      if (!vertexDone[v]) {
        vertexDone[v] = 1;
        const wx = px + vx[j];
        const wy = py + vy[j];
        vertexX[v] = kind === "periodic" ? wrap(wx, width) : wx;
        vertexY[v] = kind === "periodic" ? wrap(wy, height) : wy;
      }
    }
    cellArea[i] = area;
  }
  // the signs of coastline edges were taken from the wet cell; fix the cell lists for flipped edges
  for (let i = 0; i < nCells; i++) {
    for (let s = 6 * i; s < 6 * i + 6; s++) {
      const e = cellEdgeIndex[s];
      cellEdgeSign[s] = edgeCells[2 * e] === i ? 1 : -1;
    }
  }
  // vertex lists from the cells: kites, and the two edges of each cell at the vertex
  for (let i = 0; i < nCells; i++) {
    for (let j = 0; j < 6; j++) {
      const s = 6 * i + j;
      const v = cellVertexIndex[s];
      const k = vertexFill[v]++;
      vertexCells[3 * v + k] = i;
      vertexKiteArea[3 * v + k] = cellKiteArea[s];
      vertexArea[v] += cellKiteArea[s];
      for (const e of [cellEdgeIndex[s], cellEdgeIndex[6 * i + ((j + 1) % 6)]]) {
        let found = false;
        for (let m = 0; m < 3; m++) if (vertexEdges[3 * v + m] === e) found = true;
        if (found) continue;
        for (let m = 0; m < 3; m++) {
          if (vertexEdges[3 * v + m] < 0) {
            vertexEdges[3 * v + m] = e;
            vertexEdgeSign[3 * v + m] = edgeVertices[2 * e + 1] === v ? 1 : -1;
            break;
          }
        }
      }
    }
  }
  const vertexInterior = new Uint8Array(nVertices);
  for (let v = 0; v < nVertices; v++) {
    let ok = vertexFill[v] === 3;
    for (let m = 0; m < 3; m++) {
      const e = vertexEdges[3 * v + m];
      if (e < 0 || !edgeOpen[e]) ok = false;
    }
    vertexInterior[v] = ok ? 1 : 0;
  }

  // TRiSK tangential weights (Thuburn et al. 2009)
  const tangentOffset = new Int32Array(nEdges + 1);
  for (let e = 0; e < nEdges; e++) {
    const nc = edgeCells[2 * e + 1] >= 0 ? 2 : 1;
    tangentOffset[e + 1] = tangentOffset[e] + 5 * nc;
  }
  const nT = tangentOffset[nEdges];
  const tangentIndex = new Int32Array(nT);
  const tangentWeight = new Float64Array(nT);
  const tangentCoef = new Float64Array(nT);
  for (let e = 0; e < nEdges; e++) {
    let slot = tangentOffset[e];
    for (let side = 0; side < 2; side++) {
      const i = edgeCells[2 * e + side];
      if (i < 0) continue;
      const base = cellEdgeOffset[i];
      const n = cellEdgeOffset[i + 1] - base;
      let j0 = 0;
      while (cellEdgeIndex[base + j0] !== e) j0++;
      const signE = cellEdgeSign[base + j0];
      let passed = 0;
      for (let m = 1; m < n; m++) {
        passed += cellKiteArea[base + ((j0 + m - 1) % n)] / cellArea[i];
        const s2 = base + ((j0 + m) % n);
        const e2 = cellEdgeIndex[s2];
        const w = signE * cellEdgeSign[s2] * (0.5 - passed);
        tangentIndex[slot] = e2;
        tangentWeight[slot] = w;
        tangentCoef[slot] = (w * edgeLength[e2]) / edgeCellDistance[e];
        slot++;
      }
    }
  }

  const base = {
    kind, nCells, nEdges, nVertices, width, height, spacing: L.spacing,
    cellX, cellY, cellArea, cellEdgeOffset, cellEdgeIndex, cellEdgeSign, cellVertexIndex, cellNeighbor, cellKiteArea,
    edgeX, edgeY, edgeNormalX, edgeNormalY, edgeCells, edgeVertices, edgeLength, edgeCellDistance, edgeOpen,
    vertexX, vertexY, vertexArea, vertexCells, vertexEdges, vertexEdgeSign, vertexKiteArea, vertexInterior,
    tangentOffset, tangentIndex, tangentWeight, tangentCoef,
  };
  return { ...base, ...kernelCoefficients(base) };
}

/** The precombined coefficients of a mesh, derived from its geometry (any cell degree, any CSR layout). */
export type KernelCoefficients = Pick<Mesh,
  "cellEdgeDivCoef" | "cellEdgeKeCoef" | "edgeCellsClamped" | "edgeInvDistance" | "vertexCurlCoef" | "vertexKiteFraction" | "vertexCellsClamped">;

/**
 * Combined per-slot coefficients the fused tendency kernels read instead of dividing in their inner loops:
 * sign·l_e/A_i, l_e d_e/(4A_i), 1/d_e, sign·d_e/A_v (0 off the interior), A_iv/A_v, and clamped index pairs
 * so that coastline edges and dry kites need no branch.
 */
export function kernelCoefficients(m: Omit<Mesh, keyof KernelCoefficients>): KernelCoefficients {
  const { nCells, nEdges, nVertices, cellEdgeOffset, cellEdgeIndex, cellEdgeSign, cellArea, edgeLength, edgeCellDistance, edgeCells } = m;
  const nSlots = cellEdgeOffset[nCells];
  const cellEdgeDivCoef = new Float64Array(nSlots);
  const cellEdgeKeCoef = new Float64Array(nSlots);
  for (let i = 0; i < nCells; i++) {
    for (let q = cellEdgeOffset[i]; q < cellEdgeOffset[i + 1]; q++) {
      const e = cellEdgeIndex[q];
      cellEdgeDivCoef[q] = (cellEdgeSign[q] * edgeLength[e]) / cellArea[i];
      cellEdgeKeCoef[q] = (edgeLength[e] * edgeCellDistance[e]) / (4 * cellArea[i]);
    }
  }
  const edgeCellsClamped = new Int32Array(2 * nEdges);
  const edgeInvDistance = new Float64Array(nEdges);
  for (let e = 0; e < nEdges; e++) {
    const c1 = edgeCells[2 * e];
    const c2 = edgeCells[2 * e + 1];
    edgeCellsClamped[2 * e] = c1;
    edgeCellsClamped[2 * e + 1] = c2 >= 0 ? c2 : c1;
    edgeInvDistance[e] = 1 / edgeCellDistance[e];
  }
  const { vertexEdges, vertexEdgeSign, vertexArea, vertexInterior, vertexCells, vertexKiteArea } = m;
  const vertexCurlCoef = new Float64Array(3 * nVertices);
  const vertexKiteFraction = new Float64Array(3 * nVertices);
  const vertexCellsClamped = new Int32Array(3 * nVertices);
  for (let v = 0; v < nVertices; v++) {
    let wet = 0;
    for (let j = 3 * v; j < 3 * v + 3; j++) if (vertexCells[j] >= 0) wet = vertexCells[j];
    for (let j = 3 * v; j < 3 * v + 3; j++) {
      vertexCurlCoef[j] = vertexInterior[v] ? (vertexEdgeSign[j] * edgeCellDistance[vertexEdges[j]]) / vertexArea[v] : 0;
      const c = vertexCells[j];
      vertexKiteFraction[j] = c >= 0 ? vertexKiteArea[j] / vertexArea[v] : 0;
      vertexCellsClamped[j] = c >= 0 ? c : wet;
    }
  }
  return { cellEdgeDivCoef, cellEdgeKeCoef, edgeCellsClamped, edgeInvDistance, vertexCurlCoef, vertexKiteFraction, vertexCellsClamped };
}

/** Deterministic generator for jittered test meshes (mulberry32; common practice, no source). */
export function seededRandom(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export interface PeriodicHexOptions {
  cellsX: number;
  cellsY: number;
  /** Distance between neighbouring cell centres [m]. */
  spacing: number;
  /** Random generator displacement as a fraction of the spacing, per coordinate (≤ 0.1 keeps the topology). */
  jitter?: number;
  seed?: number;
}

/** Doubly periodic hexagonal mesh of cellsX × cellsY cells. */
export function periodicHexMesh(o: PeriodicHexOptions): Mesh {
  if (!Number.isInteger(o.cellsX) || o.cellsX < 4) throw new SolverError("bad-mesh", `mesh.cellsX must be an integer ≥ 4, got ${o.cellsX}`, "mesh.cellsX");
  if (!Number.isInteger(o.cellsY) || o.cellsY < 4 || o.cellsY % 2 !== 0) {
    throw new SolverError("bad-mesh", `mesh.cellsY must be an even integer ≥ 4, got ${o.cellsY}`, "mesh.cellsY");
  }
  if (!(o.spacing > 0)) throw new SolverError("bad-mesh", `mesh.spacing must be > 0 m, got ${o.spacing}`, "mesh.spacing");
  const jitterFrac = o.jitter ?? 0;
  if (!(jitterFrac >= 0 && jitterFrac <= 0.1)) throw new SolverError("bad-mesh", `mesh.jitter must lie in [0, 0.1], got ${jitterFrac}`, "mesh.jitter");
  const n = o.cellsX * o.cellsY;
  const jitter = new Float64Array(2 * n);
  if (jitterFrac > 0) {
    const rnd = seededRandom(o.seed ?? 1);
    for (let q = 0; q < 2 * n; q++) jitter[q] = (2 * rnd() - 1) * jitterFrac * o.spacing;
  }
  return buildFromLattice({ nx: o.cellsX, ny: o.cellsY, spacing: o.spacing, jitter, originX: 0, originY: 0 }, null, "periodic");
}

export type BasinShape =
  | { shape: "rectangle"; width: number; height: number }
  | { shape: "ellipse"; width: number; height: number }
  | { shape: "polygon"; vertices: readonly (readonly [number, number])[] };

/** Point-in-shape test; shapes are placed with their bounding box starting at (0, 0). */
export function shapeContains(s: BasinShape, x: number, y: number): boolean {
  switch (s.shape) {
    case "rectangle":
      return x > 0 && x < s.width && y > 0 && y < s.height;
    case "ellipse": {
      const a = s.width / 2;
      const b = s.height / 2;
      const dx = (x - a) / a;
      const dy = (y - b) / b;
      return dx * dx + dy * dy < 1;
    }
    case "polygon": {
      // even-odd ray casting (common practice, no source)
      let inside = false;
      const v = s.vertices;
      for (let a = 0, b = v.length - 1; a < v.length; b = a++) {
        const [xa, ya] = v[a];
        const [xb, yb] = v[b];
        if (ya > y !== yb > y && x < ((xb - xa) * (y - ya)) / (yb - ya) + xa) inside = !inside;
      }
      return inside;
    }
  }
}

export function shapeBounds(s: BasinShape): { xMin: number; xMax: number; yMin: number; yMax: number } {
  if (s.shape === "polygon") {
    const xs = s.vertices.map((p) => p[0]);
    const ys = s.vertices.map((p) => p[1]);
    return { xMin: Math.min(...xs), xMax: Math.max(...xs), yMin: Math.min(...ys), yMax: Math.max(...ys) };
  }
  return { xMin: 0, xMax: s.width, yMin: 0, yMax: s.height };
}

/**
 * Closed basin: the hexagonal cells whose centres lie inside the shape (largest connected group of them);
 * edges between a wet cell and the outside are coastline with zero normal velocity.
 */
export function basinHexMesh(shape: BasinShape, spacing: number, maxLatticePoints = 4_000_000): Mesh {
  if (!(spacing > 0)) throw new SolverError("bad-mesh", `mesh.spacing must be > 0 m, got ${spacing}`, "mesh.spacing");
  const bb = shapeBounds(shape);
  const { nx, ny, margin } = basinLattice(shape, spacing);
  if (!(nx * ny <= maxLatticePoints)) {
    throw new SolverError("bad-mesh", `mesh.spacing: ${nx}×${ny} lattice is more than the limit of ${maxLatticePoints} points; use a larger mesh.spacing`, "mesh.spacing");
  }
  const L: Lattice = {
    nx, ny, spacing, jitter: new Float64Array(2 * nx * ny),
    originX: bb.xMin - margin * spacing, originY: bb.yMin - margin * SQRT3_2 * spacing,
  };
  const inside = new Uint8Array(nx * ny);
  for (let p = 0; p < nx * ny; p++) {
    const [x, y] = idealPosition(L, p);
    inside[p] = shapeContains(shape, x, y) ? 1 : 0;
  }
  // largest connected component (flood fill)
  const label = new Int32Array(nx * ny).fill(-1);
  let best = -1;
  let bestSize = 0;
  const stack: number[] = [];
  for (let p = 0; p < nx * ny; p++) {
    if (!inside[p] || label[p] >= 0) continue;
    let size = 0;
    label[p] = p;
    stack.push(p);
    while (stack.length) {
      const q = stack.pop()!;
      size++;
      for (let j = 0; j < 6; j++) {
        const r = neighbour(L, q, j);
        if (inside[r] && label[r] < 0) { label[r] = p; stack.push(r); }
      }
    }
    if (size > bestSize) { bestSize = size; best = p; }
  }
  if (bestSize < 7) {
    throw new SolverError("bad-mesh", `mesh.spacing: a basin of ${describeSize(shape)} holds only ${bestSize} connected cell${bestSize === 1 ? "" : "s"} at a spacing of ` +
      `${spacing} m (at least 7 are needed); make the spacing smaller or the basin larger`, "mesh.spacing");
  }
  const wet = new Uint8Array(nx * ny);
  for (let p = 0; p < nx * ny; p++) wet[p] = label[p] === best ? 1 : 0;
  return buildFromLattice(L, wet, "basin");
}

/** Size of the lattice a basin is cut from: its bounding box over the spacing, with `margin` dry rows around it. */
export function basinLattice(shape: BasinShape, spacing: number): { nx: number; ny: number; margin: number; across: number; along: number } {
  const bb = shapeBounds(shape);
  const margin = 3;
  const across = (bb.xMax - bb.xMin) / spacing;
  const along = (bb.yMax - bb.yMin) / (SQRT3_2 * spacing);
  const nx = Math.ceil(across) + 2 * margin;
  let ny = Math.ceil(along) + 2 * margin;
  if (ny % 2) ny++;
  return { nx, ny, margin, across, along };
}

/** Area of one hexagonal cell of a lattice of this spacing, (√3/2) d² [m²]. */
export function hexCellArea(spacing: number): number {
  return SQRT3_2 * spacing * spacing;
}

/** Signed area of a polygon by the shoelace formula (counter-clockwise positive) [m²]. */
export function polygonArea(v: readonly (readonly [number, number])[]): number {
  let a = 0;
  for (let i = 0, j = v.length - 1; i < v.length; j = i++) a += v[j][0] * v[i][1] - v[i][0] * v[j][1];
  return 0.5 * a;
}

export function shapeArea(s: BasinShape): number {
  if (s.shape === "rectangle") return s.width * s.height;
  if (s.shape === "ellipse") return (Math.PI * s.width * s.height) / 4;
  return Math.abs(polygonArea(s.vertices));
}

/** "1200 km × 1000 km (area 1.2e6 km²)" for messages. */
export function describeSize(s: BasinShape): string {
  const bb = shapeBounds(s);
  const num = (v: number, d: number) => (Math.abs(v) < 1e7 ? String(Number(v.toPrecision(d))) : v.toPrecision(3));
  const km = (m: number) => `${num(m / 1000, 4)} km`;
  return `${km(bb.xMax - bb.xMin)} × ${km(bb.yMax - bb.yMin)} (area ${num(shapeArea(s) / 1e6, 3)} km²)`;
}

/**
 * The vertices of a polygon basin, stretched so that their bounding box is width × height when either is given
 * (each axis independently), placed with the box's lower-left corner where it was.
 */
export function stretchPolygon(
  vertices: readonly (readonly [number, number])[], width?: number, height?: number,
): [number, number][] {
  if (width === undefined && height === undefined) return vertices.map(([x, y]) => [x, y]);
  const bb = shapeBounds({ shape: "polygon", vertices });
  const sx = width === undefined ? 1 : width / (bb.xMax - bb.xMin);
  const sy = height === undefined ? 1 : height / (bb.yMax - bb.yMin);
  return vertices.map(([x, y]) => [bb.xMin + (x - bb.xMin) * sx, bb.yMin + (y - bb.yMin) * sy]);
}

/** Orientation of (a, b, c): > 0 counter-clockwise, < 0 clockwise, 0 collinear (cross product; common practice). */
function orient(ax: number, ay: number, bx: number, by: number, cx: number, cy: number): number {
  return (bx - ax) * (cy - ay) - (by - ay) * (cx - ax);
}

/** c on the closed segment a–b, given that the three are collinear. */
function onSegment(ax: number, ay: number, bx: number, by: number, cx: number, cy: number): boolean {
  return Math.min(ax, bx) <= cx && cx <= Math.max(ax, bx) && Math.min(ay, by) <= cy && cy <= Math.max(ay, by);
}

/**
 * Whether closed segments p1–p2 and p3–p4 share a point, by the orientation test of Cormen, Leiserson, Rivest
 * and Stein, Introduction to Algorithms (3rd ed. 2009), §33.1 (SEGMENTS-INTERSECT).
 */
function segmentsMeet(p1: readonly number[], p2: readonly number[], p3: readonly number[], p4: readonly number[]): boolean {
  const d1 = orient(p3[0], p3[1], p4[0], p4[1], p1[0], p1[1]);
  const d2 = orient(p3[0], p3[1], p4[0], p4[1], p2[0], p2[1]);
  const d3 = orient(p1[0], p1[1], p2[0], p2[1], p3[0], p3[1]);
  const d4 = orient(p1[0], p1[1], p2[0], p2[1], p4[0], p4[1]);
  if (((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) && ((d3 > 0 && d4 < 0) || (d3 < 0 && d4 > 0))) return true;
  if (d1 === 0 && onSegment(p3[0], p3[1], p4[0], p4[1], p1[0], p1[1])) return true;
  if (d2 === 0 && onSegment(p3[0], p3[1], p4[0], p4[1], p2[0], p2[1])) return true;
  if (d3 === 0 && onSegment(p1[0], p1[1], p2[0], p2[1], p3[0], p3[1])) return true;
  if (d4 === 0 && onSegment(p1[0], p1[1], p2[0], p2[1], p4[0], p4[1])) return true;
  return false;
}

/**
 * What is wrong with a polygon basin's vertex list, or null: fewer than three distinct vertices, a repeated
 * vertex, all vertices on one line (zero area), or two edges that cross, touch or fold back on each other.
 * `index` is the offending vertex (or the first vertex of the offending edge), null for the list as a whole.
 */
export function polygonProblem(v: readonly (readonly [number, number])[]): { index: number | null; message: string } | null {
  const known = polygonChecked.get(v);
  if (known !== undefined) return known;
  const r = findPolygonProblem(v);
  polygonChecked.set(v, r);
  return r;
}

/** Results of polygonProblem per vertex list (the schema asks twice about the same list). */
const polygonChecked = new WeakMap<object, { index: number | null; message: string } | null>();

function findPolygonProblem(v: readonly (readonly [number, number])[]): { index: number | null; message: string } | null {
  const n = v.length;
  const seen = new Map<string, number>();
  let firstRepeat: [number, number] | null = null;
  for (let i = 0; i < n; i++) {
    const key = `${v[i][0]},${v[i][1]}`;
    const j = seen.get(key);
    if (j === undefined) seen.set(key, i);
    else if (!firstRepeat) firstRepeat = [j, i];
  }
  if (seen.size < 3) return { index: null, message: `has only ${seen.size} distinct ${seen.size === 1 ? "vertex" : "vertices"}; a polygon needs at least 3` };
  if (firstRepeat) {
    const [j, i] = firstRepeat;
    const closing = j === 0 && i === n - 1 ? " (the outline closes by itself; leave the last vertex out)" : "";
    return { index: i, message: `repeats vertex [${j}] (${v[j][0]}, ${v[j][1]})${closing}` };
  }
  // all on one line: every vertex collinear with the first two
  let collinear = true;
  for (let i = 2; i < n && collinear; i++) if (orient(v[0][0], v[0][1], v[1][0], v[1][1], v[i][0], v[i][1]) !== 0) collinear = false;
  if (collinear) return { index: null, message: "has zero area: all its vertices lie on one line" };
  const next = (i: number) => (i + 1) % n;
  // bounding box of each edge, to skip the orientation tests for pairs far apart
  const box = new Float64Array(4 * n);
  for (let i = 0; i < n; i++) {
    const a = v[i], b = v[next(i)];
    box[4 * i] = Math.min(a[0], b[0]); box[4 * i + 1] = Math.max(a[0], b[0]);
    box[4 * i + 2] = Math.min(a[1], b[1]); box[4 * i + 3] = Math.max(a[1], b[1]);
  }
  for (let i = 0; i < n; i++) {
    const x0 = box[4 * i], x1 = box[4 * i + 1], y0 = box[4 * i + 2], y1 = box[4 * i + 3];
    for (let j = i + 1; j < n; j++) {
      if (box[4 * j] > x1 || box[4 * j + 1] < x0 || box[4 * j + 2] > y1 || box[4 * j + 3] < y0) continue;
      const a = v[i], b = v[next(i)], c = v[j], d = v[next(j)];
      if (next(i) === j || next(j) === i) {
        // neighbouring edges share one vertex; they only fail by folding back along each other
        const shared = next(i) === j ? b : a;
        const p = next(i) === j ? a : b;
        const q = next(i) === j ? d : c;
        if (orient(shared[0], shared[1], p[0], p[1], q[0], q[1]) === 0 &&
            ((p[0] - shared[0]) * (q[0] - shared[0]) + (p[1] - shared[1]) * (q[1] - shared[1])) > 0) {
          return { index: i, message: `–[${next(i)}] folds back along [${j}]–[${next(j)}]` };
        }
        continue;
      }
      if (segmentsMeet(a, b, c, d)) return { index: i, message: `–[${next(i)}] crosses [${j}]–[${next(j)}]` };
    }
  }
  if (polygonArea(v) === 0) return { index: null, message: "has zero area" };
  return null;
}
