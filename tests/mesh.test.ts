import { describe, expect, it } from "vitest";
import { basinHexMesh, periodicHexMesh, seededRandom } from "../solver/mesh/hexLattice";
import { curl, divergence, gradient, skewGradient, tangential, cellToVertex } from "../solver/mesh/operators";
import type { Mesh } from "../solver/mesh/types";

const regular = periodicHexMesh({ cellsX: 12, cellsY: 12, spacing: 1000 });
const jittered = periodicHexMesh({ cellsX: 12, cellsY: 12, spacing: 1000, jitter: 0.1, seed: 7 });
const ellipse = basinHexMesh({ shape: "ellipse", width: 30000, height: 20000 }, 1000);
const polygon = basinHexMesh({ shape: "polygon", vertices: [[0, 0], [30000, 0], [26000, 18000], [8000, 24000]] }, 1000);

function randomField(n: number, seed: number): Float64Array {
  const r = seededRandom(seed);
  return Float64Array.from({ length: n }, () => 2 * r() - 1);
}
const sum = (a: ArrayLike<number>) => { let s = 0; for (let i = 0; i < a.length; i++) s += a[i]; return s; };
const maxAbs = (a: ArrayLike<number>) => { let s = 0; for (let i = 0; i < a.length; i++) s = Math.max(s, Math.abs(a[i])); return s; };

describe("periodic hexagonal mesh geometry", () => {
  for (const [name, m] of [["regular", regular], ["jittered", jittered]] as const) {
    it(`${name}: Euler characteristic V − E + C = 0 on the torus (Euler's formula for genus 1; common practice, no source)`, () => {
      expect(m.nVertices - m.nEdges + m.nCells).toBe(0);
      expect(m.nEdges).toBe(3 * m.nCells);
      expect(m.nVertices).toBe(2 * m.nCells);
    });
    it(`${name}: cell, dual-triangle and rhombus areas each sum to the domain area (Thuburn et al. 2009)`, () => {
      const area = m.width * m.height;
      expect(Math.abs(sum(m.cellArea) - area) / area).toBeLessThan(1e-12);
      expect(Math.abs(sum(m.vertexArea) - area) / area).toBeLessThan(1e-12);
      let rh = 0;
      for (let e = 0; e < m.nEdges; e++) rh += 0.5 * m.edgeLength[e] * m.edgeCellDistance[e];
      expect(Math.abs(rh - area) / area).toBeLessThan(1e-12);
    });
    it(`${name}: kite areas add up to cell areas and to dual-triangle areas`, () => {
      for (let i = 0; i < m.nCells; i++) {
        let s = 0;
        for (let q = m.cellEdgeOffset[i]; q < m.cellEdgeOffset[i + 1]; q++) s += m.cellKiteArea[q];
        expect(Math.abs(s - m.cellArea[i]) / m.cellArea[i]).toBeLessThan(1e-13);
      }
      for (let v = 0; v < m.nVertices; v++) {
        const s = m.vertexKiteArea[3 * v] + m.vertexKiteArea[3 * v + 1] + m.vertexKiteArea[3 * v + 2];
        expect(Math.abs(s - m.vertexArea[v]) / m.vertexArea[v]).toBeLessThan(1e-13);
        for (let k = 0; k < 3; k++) expect(m.vertexKiteArea[3 * v + k]).toBeGreaterThan(0);
      }
    });
    it(`${name}: curl of a discrete gradient vanishes (mimetic identity CG = 0, Thuburn et al. 2009)`, () => {
      const phi = randomField(m.nCells, 3);
      const g = new Float64Array(m.nEdges);
      const c = new Float64Array(m.nVertices);
      gradient(g, m, phi);
      curl(c, m, g);
      expect(maxAbs(c) * m.spacing * m.spacing).toBeLessThan(1e-12 * maxAbs(phi) * 6);
    });
    it(`${name}: divergence is minus the adjoint of the gradient in area weights (Ringler et al. 2010)`, () => {
      const phi = randomField(m.nCells, 4);
      const F = randomField(m.nEdges, 5);
      const d = new Float64Array(m.nCells);
      const g = new Float64Array(m.nEdges);
      divergence(d, m, F);
      gradient(g, m, phi);
      let lhs = 0;
      let rhs = 0;
      let scale = 0;
      for (let i = 0; i < m.nCells; i++) { lhs += m.cellArea[i] * phi[i] * d[i]; scale += Math.abs(m.cellArea[i] * phi[i] * d[i]); }
      for (let e = 0; e < m.nEdges; e++) rhs -= m.edgeLength[e] * m.edgeCellDistance[e] * F[e] * g[e];
      expect(Math.abs(lhs - rhs) / scale).toBeLessThan(1e-13);
    });
    it(`${name}: tangential weights are antisymmetric, W(e,e') = −W(e',e) (Thuburn et al. 2009, eq. for energy conservation)`, () => {
      const lookup = new Map<string, number>();
      for (let e = 0; e < m.nEdges; e++) {
        for (let q = m.tangentOffset[e]; q < m.tangentOffset[e + 1]; q++) {
          const key = `${e},${m.tangentIndex[q]}`;
          lookup.set(key, (lookup.get(key) ?? 0) + m.tangentWeight[q]);
        }
      }
      let worst = 0;
      for (const [key, w] of lookup) {
        const [a, b] = key.split(",");
        worst = Math.max(worst, Math.abs(w + (lookup.get(`${b},${a}`) ?? NaN)));
      }
      expect(worst).toBeLessThan(1e-14);
    });
    it(`${name}: vorticity of the reconstructed perpendicular flux is minus the vertex-averaged divergence, C P F = −R D F (Thuburn et al. 2009)`, () => {
      const F = randomField(m.nEdges, 6);
      const t = new Float64Array(m.nEdges);
      const c = new Float64Array(m.nVertices);
      const d = new Float64Array(m.nCells);
      const dv = new Float64Array(m.nVertices);
      tangential(t, m, F);
      curl(c, m, t);
      divergence(d, m, F);
      cellToVertex(dv, m, d);
      let worst = 0;
      for (let v = 0; v < m.nVertices; v++) worst = Math.max(worst, Math.abs(c[v] + dv[v]));
      expect(worst).toBeLessThan(1e-12 * maxAbs(d));
    });
  }
  it("regular mesh: hexagon has l = d/√3 and area √3 d²/2 (geometry of the regular hexagon; common practice, no source)", () => {
    const d = 1000;
    for (let e = 0; e < regular.nEdges; e++) {
      expect(regular.edgeLength[e]).toBeCloseTo(d / Math.sqrt(3), 9);
      expect(regular.edgeCellDistance[e]).toBeCloseTo(d, 9);
    }
    for (let i = 0; i < regular.nCells; i++) expect(regular.cellArea[i]).toBeCloseTo((Math.sqrt(3) / 2) * d * d, 6);
  });
  it("regular mesh: tangential reconstruction of a uniform flow is exact (Thuburn et al. 2009)", () => {
    const U = [0.7, -0.3];
    const u = new Float64Array(regular.nEdges);
    for (let e = 0; e < regular.nEdges; e++) u[e] = U[0] * regular.edgeNormalX[e] + U[1] * regular.edgeNormalY[e];
    const t = new Float64Array(regular.nEdges);
    tangential(t, regular, u);
    let worst = 0;
    for (let e = 0; e < regular.nEdges; e++) {
      const tx = -regular.edgeNormalY[e];
      const ty = regular.edgeNormalX[e];
      worst = Math.max(worst, Math.abs(t[e] - (U[0] * tx + U[1] * ty)));
    }
    expect(worst).toBeLessThan(1e-14);
  });
  it("regular mesh: divergence of a skew gradient vanishes (D S = 0)", () => {
    const psi = randomField(regular.nVertices, 8);
    const s = new Float64Array(regular.nEdges);
    const d = new Float64Array(regular.nCells);
    skewGradient(s, regular, psi);
    divergence(d, regular, s);
    expect(maxAbs(d)).toBeLessThan(1e-12 * maxAbs(s) / 1000);
  });
});

function checkBasin(m: Mesh): void {
  let interiorEdges = 0;
  for (let e = 0; e < m.nEdges; e++) interiorEdges += m.edgeOpen[e];
  let interiorVertices = 0;
  for (let v = 0; v < m.nVertices; v++) interiorVertices += m.vertexInterior[v];
  // Euler relation for a simply connected planar region (Thuburn et al. 2009)
  expect(interiorEdges).toBe(m.nCells - 1 + interiorVertices);
  // each open edge appears in exactly two cells with opposite orientation, each coastline edge in one
  const seen = new Float64Array(m.nEdges);
  const count = new Int32Array(m.nEdges);
  for (let i = 0; i < m.nCells; i++) {
    for (let q = m.cellEdgeOffset[i]; q < m.cellEdgeOffset[i + 1]; q++) {
      seen[m.cellEdgeIndex[q]] += m.cellEdgeSign[q];
      count[m.cellEdgeIndex[q]]++;
    }
  }
  for (let e = 0; e < m.nEdges; e++) {
    if (m.edgeOpen[e]) { expect(count[e]).toBe(2); expect(seen[e]).toBe(0); } else { expect(count[e]).toBe(1); expect(seen[e]).toBe(1); }
  }
}

describe("closed basin meshes", () => {
  it("ellipse: Euler relation N_e(int) = N_c − 1 + N_v(int) and edge orientation", () => { checkBasin(ellipse); expect(ellipse.nCells).toBeGreaterThan(300); });
  it("polygon: Euler relation and edge orientation", () => { checkBasin(polygon); });
  it("ellipse area is close to π a b (area of an ellipse; common practice, no source)", () => {
    const area = sum(ellipse.cellArea);
    const exact = Math.PI * 15000 * 10000;
    expect(Math.abs(area - exact) / exact).toBeLessThan(0.03);
  });
  it("rectangle basin: divergence is minus the adjoint of the gradient with walls", () => {
    const m = basinHexMesh({ shape: "rectangle", width: 20000, height: 15000 }, 1000);
    const phi = randomField(m.nCells, 9);
    const F = randomField(m.nEdges, 10);
    for (let e = 0; e < m.nEdges; e++) if (!m.edgeOpen[e]) F[e] = 0;
    const d = new Float64Array(m.nCells);
    const g = new Float64Array(m.nEdges);
    divergence(d, m, F);
    gradient(g, m, phi);
    let lhs = 0; let rhs = 0; let scale = 0;
    for (let i = 0; i < m.nCells; i++) { lhs += m.cellArea[i] * phi[i] * d[i]; scale += Math.abs(m.cellArea[i] * phi[i] * d[i]); }
    for (let e = 0; e < m.nEdges; e++) rhs -= m.edgeLength[e] * m.edgeCellDistance[e] * F[e] * g[e];
    expect(Math.abs(lhs - rhs) / scale).toBeLessThan(1e-13);
  });
});
