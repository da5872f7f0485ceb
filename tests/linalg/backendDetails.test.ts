import { describe, expect, it } from "vitest";
import { krylovPhi } from "../../solver/linalg/krylov";
import { chebyshevPhi, besselJ } from "../../solver/linalg/chebyshev";
import { TAYLOR_THETA } from "../../solver/linalg/taylor";
import { estimateSpectralBound } from "../../solver/linalg/spectralBound";
import { denseOperator, densePhi, matmul } from "../../solver/linalg/dense";
import { seededRandom, staggeredWave, weightedSkewOperator } from "./fixtures";
import { mathjsExpm, mathjsPhiCombination, relativeError } from "./reference";

describe("Bessel values by Miller's algorithm", () => {
  it("match Bessel's integral J_k(x) = (1/π)∫_0^π cos(kθ − x sin θ) dθ (A&S 9.1.21), trapezoid rule with 400 points", () => {
    const out = new Float64Array(61);
    for (const x of [0.5, 1.53, 7.67, 38.4]) {
      besselJ(out, x, 60);
      for (const k of [0, 1, 2, 5, 10, 30, 45]) {
        const M = 400;
        let s = 0;
        for (let j = 0; j <= M; j++) {
          const th = (Math.PI * j) / M, wgt = j === 0 || j === M ? 0.5 : 1;
          s += wgt * Math.cos(k * th - x * Math.sin(th));
        }
        const ref = s / M;
        expect(Math.abs(out[k] - ref)).toBeLessThan(1e-14);
      }
    }
  });
});

describe("Chebyshev term count (Tal-Ezer & Kosloff 1984)", () => {
  it("matches the §7 table (12, 24, 64 at tol 1e-10, ±2) and lies between τρ and the bound from |J_k(R)| ≤ (R/2)^k/k! (A&S 9.1.62)", () => {
    const op = staggeredWave(300);
    const rnd = seededRandom(2);
    const v = [Float64Array.from({ length: op.n }, () => 2 * rnd() - 1)];
    const out = new Float64Array(op.n);
    const action = chebyshevPhi(op, { tol: 1e-10, maxPhi: 0 });
    for (const [R, table] of [[1.53, 12], [7.67, 24], [38.4, 64]]) {
      action.apply(out, R / op.spectralBound, v);
      const K = action.stats.matvecs;
      expect(Math.abs(K - table)).toBeLessThanOrEqual(2);
      expect(K).toBeGreaterThan(R);
      // first k with 2 (R/2)^k / k! ≤ tol/2 bounds the needed k from above
      let k = 0, t = 2;
      while (t > 0.5e-10) { k++; t *= R / 2 / k; }
      expect(K).toBeLessThanOrEqual(k);
      expect(action.stats.innerProducts).toBe(0);
    }
  });
  it("grows like τρ + O((τρ)^{1/3}) up to τρ = 300 (tol 1e-8)", () => {
    const op = staggeredWave(300);
    const rnd = seededRandom(4);
    const v = [new Float64Array(op.n), Float64Array.from({ length: op.n }, () => 2 * rnd() - 1)];
    const out = new Float64Array(op.n);
    const action = chebyshevPhi(op, { tol: 1e-8, maxPhi: 1 });
    for (const R of [10, 100, 300]) {
      action.apply(out, R / op.spectralBound, v);
      const excess = action.stats.matvecs - R;
      expect(excess).toBeGreaterThan(0);
      expect(excess).toBeLessThan(6 * Math.cbrt(R) + 10);
    }
  });
  it("filter σ(iω) = exp(−κ ω²/ω_c²) (order 2) equals expm(κA²/ω_c²) e^{τA} v by mathjs (§7.6)", () => {
    const fx = weightedSkewOperator(20, 8, 1, 2);
    const n = 20, a = fx.op.matrix;
    const kappa = 3, wc = 0.6, tau = 9;
    const filtered = chebyshevPhi(fx.op, { tol: 1e-10, maxPhi: 1, filter: { cutoff: wc, order: 2, strength: kappa } });
    const rnd = seededRandom(6);
    const v = [Float64Array.from({ length: n }, () => 2 * rnd() - 1), Float64Array.from({ length: n }, () => 2 * rnd() - 1)];
    const out = new Float64Array(n);
    filtered.apply(out, tau, v);
    const a2 = new Float64Array(n * n);
    matmul(a2, a, a, n);
    const sigma = mathjsExpm(a2.map((x) => (kappa * x) / (wc * wc)), n);
    const rows: number[][] = [];
    for (let i = 0; i < n; i++) rows.push(Array.from(sigma.subarray(i * n, (i + 1) * n)));
    const ref = mathjsPhiCombination(a, n, tau, v, rows);
    expect(relativeError(out, ref, fx.weights)).toBeLessThan(1e-9);
    // and the filter only damps: weighted norm below the unfiltered one
    const plain = new Float64Array(n);
    chebyshevPhi(fx.op, { tol: 1e-10, maxPhi: 1 }).apply(plain, tau, v);
    const nrm = (x: Float64Array) => Math.sqrt(x.reduce((s, xi, i) => s + fx.weights[i] * xi * xi, 0));
    expect(nrm(out)).toBeLessThan(nrm(plain));
  });
});

describe("Krylov backend", () => {
  const fx = weightedSkewOperator(80, 21, 1, 2);
  const n = 80;
  const rnd = seededRandom(12);
  const v0 = Float64Array.from({ length: n }, () => 2 * rnd() - 1);
  it("Saad's a-posteriori estimate is within a factor 3 of the true error for m = 10..30 at τρ = 7.7 (Saad 1992)", () => {
    const ref = mathjsPhiCombination(fx.op.matrix, n, 7.7, [v0]);
    let checked = 0;
    for (let m = 10; m <= 30; m += 2) {
      const action = krylovPhi(fx.op, { tol: 1e-8, maxPhi: 0, fixedDim: m });
      const out = new Float64Array(n);
      action.apply(out, 7.7, [v0]);
      const err = relativeError(out, ref, fx.weights);
      if (err < 1e-13) continue; // below round-off the estimate is allowed to be optimistic
      const ratio = action.stats.errorEstimate / err;
      expect(ratio, `m = ${m}`).toBeGreaterThan(1 / 3);
      expect(ratio, `m = ${m}`).toBeLessThan(3);
      checked++;
    }
    expect(checked).toBeGreaterThan(4);
  });
  it("needs about τρ matvecs plus a few on the staggered wave operator (energy-skew), error estimate below tol", () => {
    const op = staggeredWave(1000);
    const r = seededRandom(5);
    const v = [new Float64Array(op.n), Float64Array.from({ length: op.n }, () => 2 * r() - 1)];
    const out = new Float64Array(op.n);
    for (const R of [10, 60]) {
      const action = krylovPhi(op, { tol: 1e-8, maxPhi: 1 });
      action.apply(out, R / op.spectralBound, v);
      expect(action.mode).toBe("lanczos");
      expect(action.stats.substeps).toBe(1);
      expect(action.stats.matvecs).toBeLessThan(R + 6 * Math.cbrt(R) + 10);
      expect(action.stats.errorEstimate).toBeLessThan(1e-8);
    }
  });
  it("happy breakdown: v in a 2-dimensional invariant subspace gives an exact result and the flag", () => {
    // A = blockdiag of 2×2 rotations generators; v in the first block
    const m = new Float64Array(36);
    for (const [i, w] of [[0, 0.7], [2, 1.3], [4, 2.0]] as const) { m[i * 6 + i + 1] = w; m[(i + 1) * 6 + i] = -w; }
    const op = denseOperator(m, { weights: new Float64Array(6).fill(1), spectralBound: 2, skew: true });
    const v = [Float64Array.of(0.3, -0.8, 0, 0, 0, 0)];
    const out = new Float64Array(6);
    const action = krylovPhi(op, { tol: 1e-8, maxPhi: 0 });
    action.apply(out, 5, v);
    expect(action.stats.happyBreakdown).toBe(true);
    // exact: rotation by angle 0.7·5 (e^{tK} for K = [[0, w], [−w, 0]]; common practice, no source)
    const c = Math.cos(3.5), s = Math.sin(3.5);
    expect(Math.abs(out[0] - (c * 0.3 + s * -0.8))).toBeLessThan(1e-14);
    expect(Math.abs(out[1] - (-s * 0.3 + c * -0.8))).toBeLessThan(1e-14);
  });
  it("falls back to full Arnoldi when weights are given but the operator is not skew, and stays accurate", () => {
    const r = seededRandom(17), nn = 20;
    const a = Float64Array.from({ length: nn * nn }, () => 0.3 * (2 * r() - 1));
    const op = denseOperator(a, { weights: new Float64Array(nn).fill(1) });
    const v = [0, 1, 2].map(() => Float64Array.from({ length: nn }, () => 2 * r() - 1));
    const action = krylovPhi(op, { tol: 1e-9, maxPhi: 2, maxDim: 12 });
    const out = new Float64Array(nn);
    action.apply(out, 3, v);
    expect(action.mode).toBe("arnoldi");
    expect(relativeError(out, mathjsPhiCombination(a, nn, 3, v))).toBeLessThan(1e-8);
  });
  it("sub-steps when the basis is capped and still meets the tolerance (maxDim 20, τρ = 60)", () => {
    const action = krylovPhi(fx.op, { tol: 1e-8, maxPhi: 2, maxDim: 20 });
    const v = [new Float64Array(n), v0, v0.map((x) => 0.1 * x)];
    const out = new Float64Array(n), ref = new Float64Array(n);
    action.apply(out, 60, v);
    densePhi(fx.op, { tol: 1e-8, maxPhi: 2 }).apply(ref, 60, v);
    expect(action.stats.substeps).toBeGreaterThan(2);
    expect(relativeError(out, ref, fx.weights)).toBeLessThan(1e-7);
  });
});

describe("Taylor θ_m table (Al-Mohy & Higham 2011, Table 3.1)", () => {
  it("is increasing and agrees with Al-Mohy & Higham 2011 at m = 5, 10, …, 55", () => {
    for (let i = 1; i < TAYLOR_THETA.length; i++) expect(TAYLOR_THETA[i][1]).toBeGreaterThan(TAYLOR_THETA[i - 1][1]);
    const sheet: Record<number, number> = { 5: 2.4e-3, 10: 0.144, 15: 0.641, 20: 1.44, 25: 2.43, 30: 3.54, 35: 4.7, 40: 6.0, 45: 7.2, 50: 8.5, 55: 9.9 };
    for (const [m, th] of TAYLOR_THETA) if (sheet[m] !== undefined) expect(th).toBeCloseTo(sheet[m], 6);
  });
});

describe("spectral-bound estimate (power iteration on −A²)", () => {
  it("staggered wave: estimate → 2√(gH) from below, bound ≥ ρ with the 5% margin", () => {
    const op = staggeredWave(64, 9.81, 10);
    const est = estimateSpectralBound(op, { maxIterations: 3000, tol: 1e-12 });
    const rho = 2 * Math.sqrt(9.81 * 10);
    expect(est.estimate).toBeLessThanOrEqual(rho * (1 + 1e-12));
    expect(est.estimate).toBeGreaterThan(rho * (1 - 1e-4));
    expect(est.bound).toBeGreaterThan(rho);
    expect(est.matvecs).toBe(2 * est.iterations);
  });
  it("random weighted-skew operator with known spectrum: bound covers ρ", () => {
    const fx = weightedSkewOperator(30, 5, 2.5, 2);
    const est = estimateSpectralBound(fx.op, { maxIterations: 2000 });
    expect(est.estimate).toBeLessThanOrEqual(2.5 * (1 + 1e-12));
    expect(est.estimate).toBeGreaterThan(2.5 * 0.97);
    expect(est.bound).toBeGreaterThan(2.5);
  });
});
