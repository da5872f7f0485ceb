import { describe, expect, it } from "vitest";
import { createRun } from "../solver/driver/run";
import { restLinearOperator } from "../solver/model/linear";
import { estimateSpectralBound } from "../solver/linalg/spectralBound";
import { jacobianOperator } from "../solver/model/jacobian";
import { modalRestriction, restrictedPhiAction } from "../solver/model/restriction";
import { densePhi } from "../solver/linalg/dense";
import { createPhiAction } from "../solver/linalg/registry";
import { seededRandom } from "../solver/mesh/hexLattice";
import type { ShallowWaterModel } from "../solver/model/shallowWater";

const threeLayers = [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.4 }, { thickness: 3000, density: 1027.6 }];

function model(over: Record<string, unknown> = {}, physics: Record<string, unknown> = {}): ShallowWaterModel {
  return createRun({
    name: "lin", mesh: { type: "periodic-hex", cellsX: 6, cellsY: 6, spacing: 20000 }, layers: threeLayers,
    physics: { gravity: 9.81, f0: 7e-5, beta: 0, ...physics }, initial: { type: "rest" },
    stepper: { method: "rk4", dt: 10 }, duration: 100, ...over,
  }).model;
}

/** A basin with a seamount and β (Ringler et al. 2010: the rest-PV weighting matters only there). */
const basinWithTopography = () => model(
  { mesh: { type: "basin-hex", shape: "ellipse", width: 260000, height: 220000, spacing: 20000 } },
  { beta: 2e-11, topography: { type: "seamount", height: 1500, radius: 50000 } },
);

/** Random perturbation, zero on coastline edges; velocities scaled by `uScale`. */
function randomVector(m: ShallowWaterModel, seed: number, uScale = 0.01): Float64Array {
  const rnd = seededRandom(seed);
  const { uOffset, nEdges: ne, nLayers: L, n } = m.layout;
  const v = new Float64Array(n);
  for (let q = 0; q < n; q++) v[q] = (rnd() - 0.5) * (q < uOffset ? 1 : uScale);
  for (let k = 0; k < L; k++) for (let e = 0; e < ne; e++) if (!m.mesh.edgeOpen[e]) v[uOffset + k * ne + e] = 0;
  return v;
}

const maxAbs = (a: Float64Array) => a.reduce((s, x) => Math.max(s, Math.abs(x)), 0);
function maxDiff(a: Float64Array, b: Float64Array): number {
  let d = 0;
  for (let i = 0; i < a.length; i++) d = Math.max(d, Math.abs(a[i] - b[i]));
  return d;
}

describe("rest-state linear operator L", () => {
  it("equals the central-difference Jacobian of the tendency at rest, with topography and β (Ringler et al. 2010: 1e-12)", () => {
    const m = basinWithTopography();
    const L = restLinearOperator(m);
    const x = m.restState();
    const v = randomVector(m, 3);
    const Lv = new Float64Array(m.n);
    L.apply(Lv, v);
    const xp = new Float64Array(m.n), xm = new Float64Array(m.n), fp = new Float64Array(m.n), fm = new Float64Array(m.n);
    const eps = 1e-2;
    for (let i = 0; i < m.n; i++) { xp[i] = x[i] + eps * v[i]; xm[i] = x[i] - eps * v[i]; }
    m.tendency(fp, xp, 0);
    m.tendency(fm, xm, 0);
    const fd = fp.map((f, i) => (f - fm[i]) / (2 * eps));
    expect(maxDiff(fd, Lv) / maxAbs(Lv)).toBeLessThan(1e-9);
  });

  it("is skew-adjoint in the linear-energy inner product (Ringler et al. 2010; measured 4e-16)", () => {
    const m = basinWithTopography();
    const L = restLinearOperator(m);
    const a = randomVector(m, 5), b = randomVector(m, 6);
    const La = new Float64Array(m.n), Lb = new Float64Array(m.n);
    L.apply(La, a);
    L.apply(Lb, b);
    const ab = L.energyDot(a, Lb), ba = L.energyDot(La, b);
    expect(Math.abs(ab + ba)).toBeLessThan(1e-12 * Math.abs(ab));
    // the interface-variable form with its diagonal weights is the same operator and skew there too
    const w = L.interfaceForm.weights!;
    const ta = new Float64Array(m.n), tb = new Float64Array(m.n), tLb = new Float64Array(m.n), tLa = new Float64Array(m.n);
    L.toInterface(ta, a); L.toInterface(tb, b);
    L.interfaceForm.apply(tLb, tb); L.interfaceForm.apply(tLa, ta);
    let s1 = 0, s2 = 0;
    for (let q = 0; q < m.n; q++) { s1 += w[q] * ta[q] * tLb[q]; s2 += w[q] * tLa[q] * tb[q]; }
    expect(Math.abs(s1 - ab)).toBeLessThan(1e-12 * Math.abs(ab));
    expect(Math.abs(s1 + s2)).toBeLessThan(1e-12 * Math.abs(ab));
  });

  it("has ω_max² = 6gH/d² on the regular hexagonal mesh for f ≠ 0, by power iteration on −L² (Thuburn et al. 2009)", () => {
    const H = 1000, d = 20000, g = 9.81;
    const m = model({ mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: d }, layers: [{ thickness: H, density: 1025 }] }, { f0: 1e-4 });
    const L = restLinearOperator(m);
    const omega = estimateSpectralBound(L.interfaceForm, { maxIterations: 600, tol: 0, margin: 0 }).estimate;
    expect(Math.abs(omega ** 2 / ((6 * g * H) / d ** 2) - 1)).toBeLessThan(1e-6);
    // the bound the backends get is above it, by the documented small margin
    expect(L.spectralBound).toBeGreaterThan(omega);
    expect(L.spectralBound).toBeLessThan(1.05 * omega);
  });
});

describe("Jacobian-vector product of the full tendency", () => {
  const m = model(
    { mesh: { type: "basin-hex", shape: "ellipse", width: 260000, height: 220000, spacing: 20000 } },
    { beta: 2e-11, topography: { type: "seamount", height: 1500, radius: 50000 }, wind: { type: "zonal-cosine", amplitude: 0.1 },
      bottomDrag: 1e-6, viscosity: 500, biharmonic: 1e10 },
  );
  const x = m.restState();
  const dx = randomVector(m, 9, 1);
  for (let q = 0; q < m.n; q++) x[q] += (q < m.layout.uOffset ? 5 : 0.3) * dx[q];
  const J = jacobianOperator(m);
  J.setState(x);
  const v = randomVector(m, 10, 0.01);
  const Jv = new Float64Array(m.n);
  J.apply(Jv, v);
  const fdError = (eps: number) => {
    const xp = new Float64Array(m.n), xm = new Float64Array(m.n), fp = new Float64Array(m.n), fm = new Float64Array(m.n);
    for (let i = 0; i < m.n; i++) { xp[i] = x[i] + eps * v[i]; xm[i] = x[i] - eps * v[i]; }
    m.tendency(fp, xp, 0);
    m.tendency(fm, xm, 0);
    let e = 0;
    for (let i = 0; i < m.n; i++) e = Math.max(e, Math.abs((fp[i] - fm[i]) / (2 * eps) - Jv[i]));
    return e / maxAbs(Jv);
  };

  it("agrees with central differences, whose error falls like ε² (Taylor expansion of the central difference; common practice, no source)", () => {
    const e1 = fdError(40), e2 = fdError(20);
    expect(e1).toBeGreaterThan(1e-8); // truncation error visible at this ε, so the ratio measures it
    expect(e1 / e2).toBeGreaterThan(3.5);
    expect(e1 / e2).toBeLessThan(4.5);
    expect(fdError(0.5)).toBeLessThan(1e-8);
  });

  it("reduces to L at rest when there is no forcing or dissipation (Ringler et al. 2010)", () => {
    const mr = basinWithTopography();
    const Jr = jacobianOperator(mr);
    Jr.setState(mr.restState());
    const L = restLinearOperator(mr);
    const w = randomVector(mr, 12);
    const a = new Float64Array(mr.n), b = new Float64Array(mr.n);
    Jr.apply(a, w);
    L.apply(b, w);
    expect(maxDiff(a, b)).toBeLessThan(1e-13 * maxAbs(b));
  });
});

describe("vertical-mode restriction R and prolongation P (Gill 1982, §6.11)", () => {
  it("gives the two-layer closed-form speeds (Gill 1982, §6.2: 198.245 and 2.9557 m/s)", () => {
    const H1 = 500, H2 = 3500, g = 9.81, gp = 0.02;
    const rho2 = 1025 * (1 + gp / g);
    const m = model({ layers: [{ thickness: H1, density: 1025 }, { thickness: H2, density: rho2 }] });
    const r = modalRestriction(m, 2);
    const tr = g * (H1 + H2) + gp * H2, det = g * gp * H1 * H2;
    const c0 = Math.sqrt(0.5 * (tr + Math.sqrt(tr * tr - 4 * det))), c1 = Math.sqrt(0.5 * (tr - Math.sqrt(tr * tr - 4 * det)));
    expect(Math.abs(r.speeds[0] / c0 - 1)).toBeLessThan(1e-12);
    expect(Math.abs(r.speeds[1] / c1 - 1)).toBeLessThan(1e-12);
    expect(r.speeds[0]).toBeCloseTo(198.245, 2);
    expect(r.speeds[1]).toBeCloseTo(2.9557, 3);
  });

  for (const topo of [false, true]) {
    it(`R P = I, Π² = Π, Π energy-self-adjoint, L̂ = R L P skew (${topo ? "seamount, per-column modes" : "flat bottom"}; Gill 1982, §6.11; ≤ 1e-12)`, () => {
      const m = topo ? basinWithTopography() : model({}, { beta: 2e-11 });
      const L = restLinearOperator(m);
      for (const k of [1, 2, 3]) {
        const r = modalRestriction(m, k, L);
        expect(r.flat).toBe(!topo);
        const nm = r.modalLayout.n;
        const rnd = seededRandom(20 + k);
        const y = Float64Array.from({ length: nm }, () => rnd() - 0.5);
        const closed = (q: number) => q >= r.modalLayout.uOffset && !m.mesh.edgeOpen[(q - r.modalLayout.uOffset) % m.layout.nEdges];
        for (let q = 0; q < nm; q++) if (closed(q)) y[q] = 0; // coastline velocities are not unknowns
        const Py = new Float64Array(m.n), RPy = new Float64Array(nm);
        r.prolong(Py, y);
        r.restrict(RPy, Py);
        expect(maxDiff(RPy, y)).toBeLessThan(1e-12 * maxAbs(y));
        const a = randomVector(m, 30 + k), b = randomVector(m, 40 + k);
        const Pa = new Float64Array(m.n), PPa = new Float64Array(m.n), Pb = new Float64Array(m.n);
        r.project(Pa, a); r.project(PPa, Pa); r.project(Pb, b);
        expect(maxDiff(PPa, Pa)).toBeLessThan(1e-12 * maxAbs(Pa));
        const pab = L.energyDot(Pa, b), apb = L.energyDot(a, Pb);
        expect(Math.abs(pab - apb)).toBeLessThan(1e-12 * Math.abs(pab));
        // L̂ = R L P, and skew in the modal weights
        const Ly = new Float64Array(nm), LPy = new Float64Array(m.n), RLPy = new Float64Array(nm);
        r.operator.apply(Ly, y);
        L.apply(LPy, Py);
        r.restrict(RLPy, LPy);
        expect(maxDiff(Ly, RLPy)).toBeLessThan(1e-12 * maxAbs(Ly));
        const z = Float64Array.from({ length: nm }, (_, q) => (closed(q) ? 0 : rnd() - 0.5)), Lz = new Float64Array(nm);
        r.operator.apply(Lz, z);
        const w = r.operator.weights!;
        let s1 = 0, s2 = 0, sc = 0;
        for (let q = 0; q < nm; q++) { s1 += w[q] * z[q] * Ly[q]; s2 += w[q] * Lz[q] * y[q]; sc += Math.abs(w[q] * z[q] * Ly[q]); }
        expect(Math.abs(s1 + s2)).toBeLessThan(1e-12 * sc);
      }
    });
  }

  it("keeps a pure vertical mode in its mode under the full linear operator (flat bottom; Gill 1982, §6.11; 4e-13 after 1 h)", () => {
    const m = model({}, { f0: 1e-4 });
    const L = restLinearOperator(m);
    const full = modalRestriction(m, 3, L);
    const nm = full.modalLayout.n, { nCells: nc, nEdges: ne } = full.modalLayout;
    const y = new Float64Array(nm);
    const rnd = seededRandom(77);
    const a = 1; // first baroclinic mode only
    for (let i = 0; i < nc; i++) y[a * nc + i] = rnd() - 0.5;
    for (let e = 0; e < ne; e++) y[3 * nc + a * ne + e] = 0.01 * (rnd() - 0.5);
    const x = new Float64Array(m.n);
    full.prolong(x, y);
    const phi = createPhiAction("krylov", L.interfaceForm, { tol: 1e-13, maxPhi: 0 });
    const t0 = new Float64Array(m.n), t1 = new Float64Array(m.n), xt = new Float64Array(m.n), yt = new Float64Array(nm);
    L.toInterface(t0, x);
    phi.apply(t1, 3600, [t0]);
    L.fromInterface(xt, t1);
    full.restrict(yt, xt);
    let other = 0, own = 0;
    for (let b = 0; b < 3; b++) {
      let s = 0;
      for (let i = 0; i < nc; i++) s = Math.max(s, Math.abs(yt[b * nc + i]));
      if (b === a) own = s; else other = Math.max(other, s);
    }
    expect(own).toBeGreaterThan(1e-3);
    expect(other).toBeLessThan(1e-11 * own);
  });

  it("φ of the restricted part equals P φ_k(τL̂) R v + (v − Πv)/k! with a flat bottom, and the dense φ of M = Π̃LΠ with topography (Gill 1982, §6.11)", () => {
    for (const topo of [false, true]) {
      const m = model({}, { beta: 2e-11, ...(topo ? { topography: { type: "seamount", height: 1500, radius: 40000 } } : {}) });
      const r = modalRestriction(m, 2);
      const tau = 900;
      const v = [new Float64Array(m.n), randomVector(m, 51), randomVector(m, 52), randomVector(m, 53)];
      const mine = new Float64Array(m.n);
      restrictedPhiAction(r, densePhi(r.operator, { tol: 1e-13, maxPhi: 4 }), 3).apply(mine, tau, v);
      const want = new Float64Array(m.n);
      if (!topo) {
        // the sheet's form, term by term: Σ_k τ^k [P φ_k(τL̂) R v_k + (v_k − Π v_k)/k!]
        const dense = densePhi(r.operator, { tol: 1e-13, maxPhi: 3 });
        const nm = r.modalLayout.n;
        const Rv = new Float64Array(nm), out = new Float64Array(nm), P = new Float64Array(m.n), Pi = new Float64Array(m.n);
        for (let k = 1; k <= 3; k++) {
          r.restrict(Rv, v[k]);
          const vk: Float64Array[] = [];
          for (let j = 0; j <= k; j++) vk.push(j === k ? Rv : new Float64Array(nm));
          dense.apply(out, tau, vk);
          r.prolong(P, out);
          r.project(Pi, v[k]);
          const f = tau ** k / [1, 1, 2, 6][k];
          for (let q = 0; q < m.n; q++) want[q] += P[q] + f * (v[k][q] - Pi[q]);
        }
      } else {
        densePhi(r.restricted, { tol: 1e-13, maxPhi: 3 }).apply(want, tau, v);
      }
      expect(maxDiff(mine, want)).toBeLessThan(1e-11 * maxAbs(want));
    }
  });

  it("restricted matvec cost scales with m; the Chebyshev matvec count does not depend on m (bound set by c0)", () => {
    const m = model({ mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 } });
    const L = restLinearOperator(m);
    const counts: number[] = [];
    for (const k of [1, 2, 3]) {
      const r = modalRestriction(m, k, L);
      // cost: m/L of the full operator up to the dense 𝒢 coupling of the full one (flat bottom)
      const ratio = r.multiplyAddsPerMatvec / L.multiplyAddsPerMatvec;
      expect(ratio).toBeGreaterThan(0.85 * (k / 3));
      expect(ratio).toBeLessThan(k / 3 + 1e-12);
      const phi = createPhiAction("chebyshev", r.operator, { tol: 1e-8, maxPhi: 1 });
      const v = new Float64Array(r.modalLayout.n).fill(1e-3);
      const out = new Float64Array(r.modalLayout.n);
      const before = r.operator.counters.matvecs;
      phi.apply(out, 3000, [new Float64Array(r.modalLayout.n), v]);
      counts.push(r.operator.counters.matvecs - before);
    }
    expect(new Set(counts).size).toBe(1);
    // with topography the modes couple: m×m blocks, cost m²/L
    const t = basinWithTopography();
    const Lt = restLinearOperator(t);
    expect(modalRestriction(t, 2, Lt).multiplyAddsPerMatvec / modalRestriction(t, 1, Lt).multiplyAddsPerMatvec).toBe(4);
  });

  it("rejects more modes than layers with the field named", () => {
    expect(() => modalRestriction(model(), 4)).toThrow(/stepper\.linear: modes:4 asks for more modes than the 3 layers/);
  });
});
