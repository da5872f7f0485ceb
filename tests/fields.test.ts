import { describe, expect, it } from "vitest";
import { layerMass } from "../solver/diagnostics/budget";
import { cellOutlines, computeField, fieldRange, fieldWork, FIELDS } from "../solver/diagnostics/fields";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";

const base = {
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  stepper: { method: "rk4", dt: 50 },
  duration: 3600,
};
const build = (extra: Record<string, unknown>) => buildScenario(parseScenario({ name: "fields-test", ...base, ...extra }));
const periodic = { type: "periodic-hex", cellsX: 16, cellsY: 16, spacing: 10000 };

describe("map fields", () => {
  it("every field has a unit and a colour scale that matches anomaly vs magnitude", () => {
    for (const f of FIELDS) {
      expect(f.unit.length).toBeGreaterThan(0);
      expect(f.scale).toBe(["surface", "interface", "vorticity"].includes(f.kind) ? "diverging" : "sequential");
    }
  });

  it("a raised Gaussian surface bump shows as η₀ = a·exp(−r²/R²) (the initial condition as specified), and as interface 0", () => {
    const a = 1.5, R = 30000;
    const { model, initial, mesh } = build({ mesh: periodic, initial: { type: "bump", amplitude: a, radius: R, interface: 0 } });
    const w = fieldWork(model);
    const eta = new Float64Array(mesh.nCells);
    const disp = new Float32Array(mesh.nCells);
    computeField(eta, "surface", 0, model, initial, w);
    const r = computeField(disp, "interface", 0, model, initial, w);
    const xc = mesh.width / 2, yc = mesh.height / 2;
    for (let i = 0; i < mesh.nCells; i++) {
      const d2 = (mesh.cellX[i] - xc) ** 2 + (mesh.cellY[i] - yc) ** 2;
      expect(eta[i]).toBeCloseTo(a * Math.exp(-d2 / (R * R)), 9);
      expect(disp[i]).toBeCloseTo(eta[i], 5);
    }
    expect(r.max).toBeLessThanOrEqual(a + 1e-6);
    expect(r.max).toBeGreaterThan(0.5 * a);
  });

  it("a raised thermocline band moves interface 1 by its amplitude and leaves the free surface at rest", () => {
    const { model, initial, mesh } = build({ mesh: periodic, initial: { type: "step", amplitude: 40, interface: 1, halfWidth: 40000, width: 5000 } });
    const w = fieldWork(model);
    const d1 = new Float64Array(mesh.nCells);
    const eta = new Float64Array(mesh.nCells);
    computeField(d1, "interface", 1, model, initial, w);
    computeField(eta, "surface", 0, model, initial, w);
    const xc = mesh.width / 2;
    for (let i = 0; i < mesh.nCells; i++) {
      const dist = Math.abs(mesh.cellX[i] - xc);
      // tanh profile: 0.5·(tanh((s+W)/w) − tanh((s−W)/w)) → 1 inside, 0 far outside (the scenario's definition)
      if (dist < 10000) expect(d1[i]).toBeCloseTo(40, 3);
      if (dist > 70000) expect(Math.abs(d1[i])).toBeLessThan(1e-2);
      expect(Math.abs(eta[i])).toBeLessThan(1e-9);
    }
  });

  it("layer thickness integrates to the layer volume Σ A_i h_i of the budget", () => {
    const { model, initial, mesh } = build({ mesh: periodic, initial: { type: "bump", amplitude: 2, radius: 30000, interface: 1 } });
    const w = fieldWork(model);
    const mass = layerMass(model, initial);
    const h = new Float64Array(mesh.nCells);
    for (let k = 0; k < 2; k++) {
      computeField(h, "thickness", k, model, initial, w);
      let s = 0;
      for (let i = 0; i < mesh.nCells; i++) s += mesh.cellArea[i] * h[i];
      expect(Math.abs(s - mass[k]) / mass[k]).toBeLessThan(1e-13);
    }
    // the cells tile the torus and the bump only moves water between layers: total volume = 4000 m × area
    // (geometry of the periodic domain; common practice, no source)
    const area = mesh.width * mesh.height;
    expect(Math.abs((mass[0] + mass[1]) / area - 4000)).toBeLessThan(1e-9);
  });

  it("a uniform flow U has speed U and kinetic energy U²/2 at every cell (mean of cos² over six directions is 1/2; common practice, no source)", () => {
    const { model, initial, mesh } = build({ mesh: periodic, initial: { type: "rest" } });
    const x = Float64Array.from(initial);
    const U = 0.7, theta = 0.4;
    const { uOffset, nEdges } = model.layout;
    for (let e = 0; e < nEdges; e++) x[uOffset + nEdges + e] = U * (Math.cos(theta) * mesh.edgeNormalX[e] + Math.sin(theta) * mesh.edgeNormalY[e]);
    const w = fieldWork(model);
    const speed = new Float64Array(mesh.nCells);
    const ke = new Float64Array(mesh.nCells);
    const r = computeField(speed, "speed", 1, model, x, w);
    computeField(ke, "kinetic", 1, model, x, w);
    for (let i = 0; i < mesh.nCells; i++) {
      expect(speed[i]).toBeCloseTo(U, 12);
      expect(ke[i]).toBeCloseTo((U * U) / 2, 12);
    }
    expect(r.min).toBeCloseTo(U, 12);
    computeField(speed, "speed", 0, model, x, w);
    expect(fieldRange(speed).max).toBe(0); // layer 0 is at rest
  });

  it("solid-body rotation u = Ω × r has relative vorticity 2Ω away from the coast (common practice, no source)", () => {
    const { model, initial, mesh } = build({
      mesh: { type: "basin-hex", shape: "rectangle", width: 300000, height: 240000, spacing: 10000 }, initial: { type: "rest" },
    });
    const x = Float64Array.from(initial);
    const Omega = 3e-6, xc = 150000, yc = 120000;
    const { uOffset, nEdges } = model.layout;
    for (let e = 0; e < nEdges; e++) {
      if (!mesh.edgeOpen[e]) continue;
      const ux = -Omega * (mesh.edgeY[e] - yc);
      const uy = Omega * (mesh.edgeX[e] - xc);
      x[uOffset + e] = ux * mesh.edgeNormalX[e] + uy * mesh.edgeNormalY[e];
    }
    const w = fieldWork(model);
    const zeta = new Float64Array(mesh.nCells);
    computeField(zeta, "vorticity", 0, model, x, w);
    let checked = 0;
    for (let i = 0; i < mesh.nCells; i++) {
      let interior = true;
      for (let q = mesh.cellEdgeOffset[i]; q < mesh.cellEdgeOffset[i + 1]; q++) if (!mesh.vertexInterior[mesh.cellVertexIndex[q]]) interior = false;
      if (!interior) continue;
      expect(zeta[i] / (2 * Omega)).toBeCloseTo(1, 10);
      checked++;
    }
    expect(checked).toBeGreaterThan(300);
  });

  it("fieldRange skips NaN and reports an all-NaN field as NaN", () => {
    expect(fieldRange(Float64Array.of(3, NaN, -2, 7))).toEqual({ min: -2, max: 7 });
    expect(Number.isNaN(fieldRange(Float64Array.of(NaN)).min)).toBe(true);
  });
});

describe("cell outlines for the map", () => {
  it("each outline's shoelace area equals the mesh's cell area, also across the periodic seam (Gauss's area formula; common practice, no source)", () => {
    for (const meshSpec of [periodic, { type: "basin-hex", shape: "ellipse", width: 200000, height: 150000, spacing: 10000 }]) {
      const { mesh } = build({ mesh: meshSpec, initial: { type: "rest" } });
      const o = cellOutlines(mesh);
      for (let i = 0; i < mesh.nCells; i++) {
        let a = 0;
        for (let q = o.offset[i], n = o.offset[i + 1]; q < n; q++) {
          const r = q + 1 < n ? q + 1 : o.offset[i];
          a += o.vertexXY[2 * q] * o.vertexXY[2 * r + 1] - o.vertexXY[2 * r] * o.vertexXY[2 * q + 1];
        }
        expect(a / 2 / mesh.cellArea[i]).toBeCloseTo(1, 9);
      }
    }
  });

  it("a basin's coastline segments join end to end into closed loops and a periodic mesh has none", () => {
    const { mesh } = build({ mesh: { type: "basin-hex", shape: "ellipse", width: 200000, height: 150000, spacing: 10000 }, initial: { type: "rest" } });
    const o = cellOutlines(mesh);
    expect(o.coast.length).toBeGreaterThan(0);
    const key = (x: number, y: number) => `${Math.round(x)},${Math.round(y)}`;
    const degree = new Map<string, number>();
    for (let c = 0; c < o.coast.length; c += 2) degree.set(key(o.coast[c], o.coast[c + 1]), (degree.get(key(o.coast[c], o.coast[c + 1])) ?? 0) + 1);
    for (const d of degree.values()) expect(d % 2).toBe(0);
    expect(cellOutlines(build({ mesh: periodic, initial: { type: "rest" } }).mesh).coast.length).toBe(0);
  });
});
