import type { Mesh } from "../mesh/types.js";
import { ncInt, type NcAttributes, type NcDimension, type NcVariable } from "./netcdf.js";

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

/** Attributes that tie a data variable to the mesh's faces (CF cell_measures points at the cell areas). */
export const faceAttrs = (extra: NcAttributes): NcAttributes => ({ ...extra, mesh: "mesh", location: "face", coordinates: "face_x face_y", cell_measures: "area: face_area" });
/** Attributes that tie a data variable to the mesh's edges. */
export const edgeAttrs = (extra: NcAttributes): NcAttributes => ({ ...extra, mesh: "mesh", location: "edge", coordinates: "edge_x edge_y" });

/** The mesh dimensions: node, face, edge, max_face_nodes, two. */
export function ugridDimensions(t: UgridTopology, m: Mesh): NcDimension[] {
  return [
    { name: "node", length: t.nNodes },
    { name: "face", length: m.nCells },
    { name: "edge", length: m.nEdges },
    { name: "max_face_nodes", length: t.maxFaceNodes },
    { name: "two", length: 2 },
  ];
}

/**
 * The mesh variables of any Stepwell file (a run, a statistics study): the topology variable `mesh`,
 * coordinates, connectivity, edge normals and lengths, cell areas. Data variables on the mesh use
 * `faceAttrs`/`edgeAttrs`; their data comes from `ugridData`.
 */
export function ugridVariables(): NcVariable[] {
  const xy = (loc: string, what: string): NcVariable[] => (["x", "y"] as const).map((c) => ({
    name: `${loc}_${c}`, type: "double", dimensions: [loc],
    attributes: { standard_name: `projection_${c}_coordinate`, long_name: `${c} of the ${what}`, units: "m", mesh: "mesh", location: loc },
  }));
  return [
    {
      name: "mesh", type: "int", dimensions: [], attributes: {
        cf_role: "mesh_topology", long_name: "Topology of the Voronoi C-grid: nodes are Voronoi vertices, faces are cells, edges are edges",
        units: "1", topology_dimension: ncInt(2), node_coordinates: "node_x node_y", face_coordinates: "face_x face_y", edge_coordinates: "edge_x edge_y",
        face_node_connectivity: "face_nodes", edge_node_connectivity: "edge_nodes", edge_face_connectivity: "edge_faces",
        face_dimension: "face", edge_dimension: "edge",
      },
    },
    ...xy("node", "Voronoi vertices (cell corners)"),
    { name: "node_vertex", type: "int", dimensions: ["node"], attributes: { long_name: "mesh vertex this node stands for (periodic copies repeat an index)", units: "1", start_index: ncInt(0) } },
    ...xy("face", "cell centres (Voronoi generators)"),
    ...xy("edge", "velocity points (where the line between the two cell centres crosses the edge)"),
    { name: "face_nodes", type: "int", dimensions: ["face", "max_face_nodes"], attributes: { cf_role: "face_node_connectivity", long_name: "corners of each cell, counter-clockwise", units: "1", start_index: ncInt(0), _FillValue: ncInt(-1) } },
    { name: "edge_nodes", type: "int", dimensions: ["edge", "two"], attributes: { cf_role: "edge_node_connectivity", long_name: "end points of each edge, the second along +t = k × n", units: "1", start_index: ncInt(0), _FillValue: ncInt(-1) } },
    { name: "edge_faces", type: "int", dimensions: ["edge", "two"], attributes: { cf_role: "edge_face_connectivity", long_name: "cells on either side of each edge; the normal points from the first to the second (−1: outside a coast)", units: "1", start_index: ncInt(0), _FillValue: ncInt(-1) } },
    { name: "edge_normal_x", type: "double", dimensions: ["edge"], attributes: edgeAttrs({ long_name: "x component of the unit normal of each edge", units: "1" }) },
    { name: "edge_normal_y", type: "double", dimensions: ["edge"], attributes: edgeAttrs({ long_name: "y component of the unit normal of each edge", units: "1" }) },
    { name: "edge_length", type: "double", dimensions: ["edge"], attributes: edgeAttrs({ long_name: "length of each edge", units: "m" }) },
    { name: "face_area", type: "double", dimensions: ["face"], attributes: { standard_name: "cell_area", long_name: "area of each cell", units: "m2", mesh: "mesh", location: "face", coordinates: "face_x face_y" } },
  ];
}

/** The data of the variables of `ugridVariables`, by name. */
export function ugridData(t: UgridTopology, m: Mesh): Record<string, ArrayLike<number>> {
  return {
    mesh: [0], node_x: t.nodeX, node_y: t.nodeY, node_vertex: t.nodeVertex, face_x: m.cellX, face_y: m.cellY, edge_x: m.edgeX, edge_y: m.edgeY,
    face_nodes: t.faceNodes, edge_nodes: t.edgeNodes, edge_faces: t.edgeFaces, edge_normal_x: m.edgeNormalX, edge_normal_y: m.edgeNormalY,
    edge_length: m.edgeLength, face_area: m.cellArea,
  };
}
