import { describe, expect, it } from "vitest";
import { expm, padeCoefficients, PADE_THETA, phiCombinationDense, createPhiCombinationWorkspace } from "../../solver/linalg/dense";
import { phiReal } from "../../solver/linalg/scalarPhi";
import { seededRandom } from "./fixtures";
import { mathjsExpm, mathjsPhiCombination } from "./reference";

function randomMatrix(n: number, scale: number, seed: number): Float64Array {
  const r = seededRandom(seed);
  return Float64Array.from({ length: n * n }, () => scale * (2 * r() - 1));
}
const maxRel = (a: Float64Array, b: Float64Array) => {
  let d = 0, s = 0;
  for (let i = 0; i < a.length; i++) { d = Math.max(d, Math.abs(a[i] - b[i])); s = Math.max(s, Math.abs(b[i])); }
  return d / s;
};

describe("dense expm (Higham 2005 scaling and squaring)", () => {
  it("Padé coefficients match Higham (2005) eq. (2.1)/Table: b_1/b_0 = 1/2, b_2/b_0 = 0.12 (from memory of the printed b's 64764752532480000, 32382376266240000, 7771770303897600, 1187353796428800)", () => {
    const b = padeCoefficients(13);
    expect(b[1]).toBeCloseTo(32382376266240000 / 64764752532480000, 15);
    expect(b[2]).toBeCloseTo(7771770303897600 / 64764752532480000, 15);
    expect(b[3]).toBeCloseTo(1187353796428800 / 64764752532480000, 15);
    for (let i = 1; i < PADE_THETA.length; i++) expect(PADE_THETA[i].theta).toBeGreaterThan(PADE_THETA[i - 1].theta);
  });
  it("matches mathjs expm on random 8×8 matrices of norm 1e-3 … 300 (all Padé degrees and squaring)", () => {
    for (const [k, scale] of [1e-4, 0.02, 0.1, 0.3, 1, 5, 40].entries()) {
      const n = 8, a = randomMatrix(n, scale, 11 + k);
      const out = new Float64Array(n * n);
      expm(out, a, n);
      expect(maxRel(out, mathjsExpm(a, n))).toBeLessThan(1e-12 * Math.max(1, scale * n));
    }
  });
  it("1×1 augmented combination equals Σ τ^k φ_k(τa) v_k from the scalar functions (Al-Mohy & Higham 2011, Thm 2.1)", () => {
    const ws = createPhiCombinationWorkspace(1, 3), out = new Float64Array(1);
    for (const a of [-3, 0.5, 2]) {
      const tau = 0.7, v = [0.3, -1.1, 2.0, 0.4].map((x) => Float64Array.of(x));
      phiCombinationDense(out, Float64Array.of(a), 1, tau, v, ws);
      let ref = 0;
      for (let k = 0; k <= 3; k++) ref += Math.pow(tau, k) * phiReal(k, tau * a) * v[k][0];
      expect(Math.abs(out[0] - ref) / Math.abs(ref)).toBeLessThan(1e-13);
    }
  });
  it("augmented combination matches mathjs expm of the augmented matrix for a random 12×12 matrix", () => {
    const n = 12, a = randomMatrix(n, 0.8, 5), r = seededRandom(9);
    const v = [0, 1, 2, 3].map(() => Float64Array.from({ length: n }, () => 2 * r() - 1));
    const ws = createPhiCombinationWorkspace(n, 3), out = new Float64Array(n);
    for (const tau of [0.1, 1, 4]) {
      phiCombinationDense(out, a, n, tau, v, ws);
      expect(maxRel(out, mathjsPhiCombination(a, n, tau, v))).toBeLessThan(1e-12);
    }
  });
});
