import type { StepperDefinition } from "../../solver/api.js";

/**
 * A split-explicit variant written only on the problem's fast/slow split: the free surface η and depth-mean
 * velocity ū are sub-cycled inside each long step, and the sub-cycle is averaged with a *sharpened triangle*
 * window over [t_n, t_n + 2Δt] instead of the built-in's boxcar or raised cosine. With T_K(s) = (K − |s|)/K²
 * the triangle (Bartlett) window of half-width K sub-steps centred on t_{n+1} (s = j − M):
 *
 *   a_j = α T_{M/2}(s) + (1 − α) T_M(s),   α = m₂(T_M) / (m₂(T_M) − m₂(T_{M/2})),   m₂(T) = Σ_s T(s) s²
 *
 * Σ a_j = 1, the window is symmetric, and its second moment is zero (a Richardson combination of two widths),
 * so the averaged fast state is accurate to O((ωΔt)⁴) per step and the method stays second order, while
 * barotropic frequencies near 2π/Δt are still damped (a plain averaging window of width ∝ Δt damps the fast
 * wave by O((ωΔt)²) per step, i.e. first order in the fast mode).
 *
 * Sub-cycle: forward–backward in its time-symmetric (Störmer–Verlet) arrangement, the Coriolis term by a
 * trapezoidal predictor–corrector (Hairer, Lubich & Wanner 2003, Acta Numerica 12; Higdon & de Szoeke 1997,
 * J. Comput. Phys. 135). The transport weights b_j follow from the a_j so that the averaged free surface
 * equals the one the layer fluxes give; the split's `reconcile` then updates layer thicknesses in flux form,
 * so layer volume is exact. Two passes (predictor, then centred corrector) give second order.
 */
const splitTriangle: StepperDefinition = {
  name: "split-triangle",
  order: 2,
  description: "split-explicit with a sharpened-triangle average of the barotropic sub-cycle",
  options: {
    substeps: { type: "integer", min: 1, max: 20000, help: "barotropic sub-steps per long step (default: from the fast-wave limit)" },
  },
  create(problem, options) {
    const fs = problem.fastSlow;
    const n = problem.n, nE = fs.nEdges, nC = fs.nCells;
    const xn = problem.newVector(), xc = problem.newVector(), xp = problem.newVector(), F = problem.newVector();
    const uPn = fs.newLayerEdgeVector(), uStar = fs.newLayerEdgeVector(), tPrime = fs.newLayerEdgeVector(), vPrime = fs.newLayerEdgeVector();
    const ubN = fs.newEdgeVector(), slow = fs.newEdgeVector(), p = fs.newEdgeVector(), c1 = fs.newEdgeVector(), c2 = fs.newEdgeVector();
    const ub = fs.newEdgeVector(), ubPred = fs.newEdgeVector(), vbar = fs.newEdgeVector(), ubEnd = fs.newEdgeVector();
    const etaN = fs.newCellVector(), eta = fs.newCellVector(), dEta = fs.newCellVector();
    let weights = new Float64Array(0);
    let weightsFor = 0;
    /** a_j, j = 1 … 2M − 1 (stored at j − 1); recomputed only when M changes. */
    const windowWeights = (M: number): Float64Array => {
      if (weightsFor === M) return weights;
      if (weights.length < 2 * M - 1) weights = new Float64Array(2 * M - 1);
      const tri = (s: number, K: number) => (Math.abs(s) < K ? (K - Math.abs(s)) / (K * K) : 0);
      const m2 = (K: number) => { let m = 0; for (let s = -K + 1; s < K; s++) m += tri(s, K) * s * s; return m; };
      const half = Math.max(1, Math.round(M / 2));
      const alpha = half === M ? 1 : m2(M) / (m2(M) - m2(half));
      for (let j = 1; j <= 2 * M - 1; j++) weights[j - 1] = alpha * tri(j - M, half) + (1 - alpha) * tri(j - M, M);
      weightsFor = M;
      return weights;
    };

    const pass = (out: Float64Array, centre: Float64Array, tc: number, dt: number, M: number): void => {
      problem.tendency(F, centre, tc);
      fs.freeze(centre);
      fs.splitTendency(slow, tPrime, centre, F);
      for (let q = 0; q < uStar.length; q++) uStar[q] = uPn[q] + dt * tPrime[q];
      const tau = dt / M, J = 2 * M - 1, a = windowWeights(M);
      ub.set(ubN);
      fs.surfaceTendency(dEta, ub);
      for (let i = 0; i < nC; i++) eta[i] = etaN[i] + 0.5 * tau * dEta[i];
      for (let e = 0; e < nE; e++) vbar[e] = ub[e] / (2 * M);
      ubEnd.fill(0);
      let before = 0;
      for (let j = 1; j <= J; j++) {
        fs.pressure(p, eta);
        fs.coriolis(c1, ub);
        for (let e = 0; e < nE; e++) ubPred[e] = ub[e] + tau * (slow[e] + p[e] + c1[e]);
        fs.coriolis(c2, ubPred);
        for (let e = 0; e < nE; e++) ub[e] += tau * (slow[e] + p[e] + 0.5 * (c1[e] + c2[e]));
        fs.surfaceTendency(dEta, ub);
        const aj = a[j - 1];
        const b = (1 - before - 0.5 * aj) / M;
        before += aj;
        for (let e = 0; e < nE; e++) { vbar[e] += b * ub[e]; ubEnd[e] += aj * ub[e]; }
        for (let i = 0; i < nC; i++) eta[i] += tau * dEta[i];
      }
      for (let q = 0; q < vPrime.length; q++) vPrime[q] = 0.5 * (uPn[q] + uStar[q]);
      fs.reconcile(out, xn, vPrime, vbar, uStar, ubEnd, dt);
    };

    return {
      label: `split-triangle (substeps=${options.substeps ?? "auto"})`,
      step(x, t, dt) {
        const M = (options.substeps as number | undefined) ?? Math.max(1, Math.ceil((dt * fs.maxFrequency) / 1.5));
        xn.set(x);
        fs.barotropic(etaN, ubN, xn);
        fs.baroclinic(uPn, xn, ubN);
        pass(xp, xn, t, dt, M);
        for (let i = 0; i < n; i++) xc[i] = 0.5 * (xn[i] + xp[i]);
        pass(x, xc, t + 0.5 * dt, dt, M);
      },
    };
  },
};

export default splitTriangle;
