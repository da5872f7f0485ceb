import type { StepperDefinition } from "../../solver/api.js";

/**
 * Leapfrog with the Robert–Asselin–Williams (RAW) filter — the classical three-time-level stepper of ocean and
 * atmosphere models (Williams 2009, Mon. Wea. Rev. 137, 2538–2546; Robert 1966, Asselin 1972):
 *
 *   x_{n+1} = x̄_{n−1} + 2Δt F(x_n)
 *   d       = ν/2 (x̄_{n−1} − 2 x_n + x_{n+1})
 *   x̄_n     = x_n + α d,      x_{n+1} ← x_{n+1} − (1 − α) d
 *
 * With α = 1/2 the filter leaves the mean of the three time levels unchanged and the scheme stays second
 * order; α = 1 is the plain Robert–Asselin filter (first order). It needs the previous (filtered) state, so
 * the first step is one classical RK4 step, and the previous state is saved with restarts. Every update is a
 * combination of states and tendencies whose layer volumes cancel, so layer volume is exact.
 */
const leapfrogRaw: StepperDefinition = {
  name: "leapfrog-raw",
  order: 2,
  description: "leapfrog with the Robert–Asselin–Williams filter, started by one RK4 step",
  options: {
    nu: { type: "number", default: 0.2, min: 0, max: 1, help: "filter strength ν (0.2 is usual)" },
    alpha: { type: "number", default: 0.5, min: 0.5, max: 1, help: "Williams' α: 0.5 keeps second order, 1 is the Robert–Asselin filter" },
  },
  create(problem, options) {
    const nu = options.nu as number, alpha = options.alpha as number;
    const n = problem.n;
    const prev = problem.newVector(); // x̄_{n−1}
    const f = problem.newVector(), y = problem.newVector(), acc = problem.newVector();
    let started = false;
    return {
      label: `leapfrog-raw (nu=${nu}, alpha=${alpha})`,
      order: alpha === 0.5 ? 2 : 1,
      step(x, t, dt) {
        if (!started) {
          // one RK4 step from x_0 to x_1 (Kutta 1901); x_0 becomes the previous level
          prev.set(x);
          acc.fill(0);
          const c = [0, 0.5, 0.5, 1], w = [1 / 6, 1 / 3, 1 / 3, 1 / 6];
          for (let s = 0; s < 4; s++) {
            if (s === 0) y.set(x); else for (let i = 0; i < n; i++) y[i] = x[i] + c[s] * dt * f[i];
            problem.tendency(f, y, t + c[s] * dt);
            for (let i = 0; i < n; i++) acc[i] += w[s] * f[i];
          }
          for (let i = 0; i < n; i++) x[i] += dt * acc[i];
          started = true;
          return;
        }
        problem.tendency(f, x, t);
        for (let i = 0; i < n; i++) {
          const next = prev[i] + 2 * dt * f[i];
          const d = 0.5 * nu * (prev[i] - 2 * x[i] + next);
          prev[i] = x[i] + alpha * d;
          x[i] = next - (1 - alpha) * d;
        }
      },
      saveState() {
        const s = new Float64Array(n + 1);
        s[0] = started ? 1 : 0;
        s.set(prev, 1);
        return s;
      },
      loadState(s) {
        started = s[0] === 1;
        prev.set(s.subarray(1, n + 1));
      },
    };
  },
};

export default leapfrogRaw;
