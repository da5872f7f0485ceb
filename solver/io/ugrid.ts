import type { Mesh } from "../mesh/types.js";

/**
 * The mesh as a UGRID 1.0 2-D topology (node = Voronoi vertex, face = cell, edge = edge; UGRID conventions
 * 1.0, Jagers et al. 2016). On a periodic mesh a face or edge that crosses the seam is drawn with its own
 * copies of the nodes on the far side (the vertex shifted by a period), so a viewer draws every cell whole and
 * none across the domain; `nodeVertex` says which mesh vertex each node stands for.
 */
export interface UgridTopology {
  readonly nNodes: number;
  readonly nodeX: Float64Array;
  readonly nodeY: Float64Array;
  /** Mesh vertex of each node (nodes past nVertices are periodic copies). */
  readonly nodeVertex: Int32Array;
  readonly maxFaceNodes: number;
  /** nCells × maxFaceNodes, counter-clockwise, 0-based, −1 past a face's last node. */
  readonly faceNodes: Int32Array;
  /** nEdges × 2: the edge's nodes (v1, v2 of the mesh, so v2 − v1 is along +t = k × n). */
  readonly edgeNodes: Int32Array;
  /** nEdges × 2: the cells on either side, normal from the first to the second; −1 outside a coast. */
  readonly edgeFaces: Int32Array;
}

export function ugridTopology(m: Mesh): UgridTopology {
  const off = m.cellEdgeOffset;
  let maxFaceNodes = 0;
  for (let i = 0; i < m.nCells; i++) maxFaceNodes = Math.max(maxFaceNodes, off[i + 1] - off[i]);
  const nodeX: number[] = Array.from(m.vertexX);
  const nodeY: number[] = Array.from(m.vertexY);
  const nodeVertex: number[] = Array.from({ length: m.nVertices }, (_, v) => v);
  const copies = new Map<number, number>();
  const periodic = m.kind === "periodic";
  /** Node for vertex v seen from the point (x0, y0): the vertex itself, or its copy shifted by whole periods. */
  const nodeNear = (v: number, x0: number, y0: number): number => {
    if (!periodic) return v;
    const sx = Math.round((x0 - m.vertexX[v]) / m.width);
    const sy = Math.round((y0 - m.vertexY[v]) / m.height);
    if (sx === 0 && sy === 0) return v;
    const key = (v * 5 + (sx + 2)) * 5 + (sy + 2); // a vertex next to a cell is at most one period away
    let n = copies.get(key);
    if (n === undefined) {
      n = nodeVertex.length;
      copies.set(key, n);
      nodeX.push(m.vertexX[v] + sx * m.width);
      nodeY.push(m.vertexY[v] + sy * m.height);
      nodeVertex.push(v);
    }
    return n;
  };
  const faceNodes = new Int32Array(m.nCells * maxFaceNodes).fill(-1);
  for (let i = 0; i < m.nCells; i++) {
    for (let q = off[i], j = 0; q < off[i + 1]; q++, j++) faceNodes[i * maxFaceNodes + j] = nodeNear(m.cellVertexIndex[q], m.cellX[i], m.cellY[i]);
  }
  const edgeNodes = new Int32Array(2 * m.nEdges);
  for (let e = 0; e < m.nEdges; e++) {
    edgeNodes[2 * e] = nodeNear(m.edgeVertices[2 * e], m.edgeX[e], m.edgeY[e]);
    edgeNodes[2 * e + 1] = nodeNear(m.edgeVertices[2 * e + 1], m.edgeX[e], m.edgeY[e]);
  }
  return {
    nNodes: nodeVertex.length, nodeX: Float64Array.from(nodeX), nodeY: Float64Array.from(nodeY), nodeVertex: Int32Array.from(nodeVertex),
    maxFaceNodes, faceNodes, edgeNodes, edgeFaces: Int32Array.from(m.edgeCells),
  };
}
