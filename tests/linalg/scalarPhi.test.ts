import { describe, expect, it } from "vitest";
import { phiReal, phiRealAll, phiComplexAll, phiClosedFormReal, phiSeriesReal, inverseFactorial } from "../../solver/linalg/scalarPhi";

describe("scalar φ-functions", () => {
  it("φ_k(1) = e − 1, e − 2, e − 5/2, e − 8/3 (Hochbruck & Ostermann 2010, Acta Numerica 19; φ_k(1) = e − Σ_{j<k} 1/j!)", () => {
    const e = Math.E;
    // absolute tolerance: the reference differences themselves carry ~4e-16 rounding
    expect(Math.abs(phiReal(1, 1) - (e - 1))).toBeLessThan(1e-15);
    expect(Math.abs(phiReal(2, 1) - (e - 2))).toBeLessThan(1e-15);
    expect(Math.abs(phiReal(3, 1) - (e - 5 / 2))).toBeLessThan(1e-15);
    expect(Math.abs(phiReal(4, 1) - (e - 8 / 3))).toBeLessThan(1e-15);
    expect(phiReal(4, 1)).toBeCloseTo(0.0516151618, 10); // §4.4 printed value
  });
  it("φ_k(0) = 1/k! (series definition, §6.1)", () => {
    const f = [1, 1, 1 / 2, 1 / 6, 1 / 24, 1 / 120, 1 / 720];
    for (let k = 0; k < f.length; k++) expect(Math.abs(phiReal(k, 0) - f[k])).toBeLessThanOrEqual(1e-16 * f[k]);
  });
  it("small |z|: matches the first series terms 1/k! + z/(k+1)! + z²/(k+2)!; the naive closed form fails near 1e-6", () => {
    for (const z of [1e-6, -1e-6, 3e-7]) {
      for (let k = 1; k <= 4; k++) {
        const series3 = inverseFactorial(k) + z * inverseFactorial(k + 1) + z * z * inverseFactorial(k + 2); // §6.1, remainder O(z³)
        expect(Math.abs(phiReal(k, z) - series3) / series3).toBeLessThan(1e-15);
      }
      // closed form (e^z − 1 − z)/z² loses everything to cancellation (§6.1 / §8.1 pitfall)
      const naive = phiClosedFormReal(2, z);
      expect(Math.abs(naive - 0.5) / 0.5).toBeGreaterThan(1e-6);
      const naive3 = phiClosedFormReal(3, z);
      expect(Math.abs(naive3 - 1 / 6) * 6).toBeGreaterThan(1e-2);
    }
  });
  it("agrees with the closed form where the closed form is well conditioned (|z| = 5..30)", () => {
    for (const z of [5, -5, 12, -30]) for (let k = 1; k <= 4; k++) {
      const cf = phiClosedFormReal(k, z);
      expect(Math.abs(phiReal(k, z) - cf) / Math.abs(cf)).toBeLessThan(1e-13);
    }
  });
  it("series and recurrence branches join continuously: recurrence φ_{k+1} = (φ_k − 1/k!)/z (§6.1) at |z| ≈ 1..4", () => {
    const out = new Float64Array(6);
    for (const z of [0.9, 1.9, 2.1, -2.6, 3.9, -4.1]) {
      phiRealAll(out, 5, z);
      for (let k = 0; k < 5; k++) {
        const rec = (out[k] - inverseFactorial(k)) / z;
        expect(Math.abs(out[k + 1] - rec) / Math.abs(out[k + 1])).toBeLessThan(2e-14);
      }
      for (let k = 1; k <= 5; k++) expect(Math.abs(out[k] - phiSeriesReal(k, z)) / out[k]).toBeLessThan(1e-14);
    }
  });
  it("complex φ_k against the Kassam–Trefethen contour mean φ_k(z) = (1/M) Σ φ_k(z + e^{iθ_j}) of closed forms (Kassam & Trefethen 2005)", () => {
    const re = new Float64Array(4), im = new Float64Array(4);
    const M = 64;
    for (const [zr, zi] of [[0, 1e-5], [0, 0.7], [-0.3, 2.5], [1.2, -0.4]]) {
      phiComplexAll(re, im, 3, zr, zi);
      for (let k = 1; k <= 3; k++) {
        let sr = 0, si = 0;
        for (let j = 0; j < M; j++) {
          const th = (2 * Math.PI * (j + 0.5)) / M;
          const wr = zr + Math.cos(th), wi = zi + Math.sin(th);
          // closed form (e^w − Σ_{j<k} w^j/j!) / w^k in complex arithmetic
          let er = Math.exp(wr) * Math.cos(wi), ei = Math.exp(wr) * Math.sin(wi);
          let pr = 1, pi = 0;
          for (let q = 0; q < k; q++) {
            er -= pr * inverseFactorial(q); ei -= pi * inverseFactorial(q);
            const nr = pr * wr - pi * wi; pi = pr * wi + pi * wr; pr = nr;
          }
          const d = pr * pr + pi * pi;
          sr += (er * pr + ei * pi) / d; si += (ei * pr - er * pi) / d;
        }
        sr /= M; si /= M;
        expect(Math.hypot(re[k] - sr, im[k] - si) / Math.hypot(sr, si)).toBeLessThan(1e-13);
      }
    }
  });
  it("complex branch reproduces φ_1(iy) = (e^{iy} − 1)/(iy) at y = 40 and the real function on the real axis", () => {
    const re = new Float64Array(5), im = new Float64Array(5);
    phiComplexAll(re, im, 1, 0, 40);
    // (cos y − 1 + i sin y)/(i y) = sin y / y − i (cos y − 1)/y
    expect(Math.abs(re[1] - Math.sin(40) / 40)).toBeLessThan(1e-16);
    expect(Math.abs(im[1] + (Math.cos(40) - 1) / 40)).toBeLessThan(1e-16);
    phiComplexAll(re, im, 4, -1.7, 0);
    for (let k = 0; k <= 4; k++) { expect(Math.abs(re[k] - phiReal(k, -1.7)) / re[k]).toBeLessThan(1e-15); expect(im[k]).toBe(0); }
  });
});
