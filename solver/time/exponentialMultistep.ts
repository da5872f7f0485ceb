/**
 * Exponential Adams–Bashforth of order 2 ("exp-ab2"): an exponential multistep method that needs a single
 * φ-action per step (Cox & Matthews 2002, J. Comput. Phys. 176, 430–455, their multistep ETD2 scheme; exponential
 * multistep methods in general: Calvo & Palencia 2006, Numer. Math. 102, from memory). With F(x) = A x + N(x):
 *
 *   x_{n+1} = x_n + h φ1(hA) F(x_n) + h φ2(hA) (N_n − N_{n−1})
 *
 * in increment form (φ-functions act on tendencies only, so layer volume is exact). Both terms go into one
 * call, apply(out, h, [0, F_n, (N_n − N_{n−1})/h]) = h φ1 F_n + h² φ2 (N_n − N_{n−1})/h, so every step costs one
 * tendency evaluation, one product with A and one φ-action (ETD2RK: two tendencies, two φ-actions). The first
 * step, with no N_{n−1}, is an exponential Euler step (its local error O(h²) keeps the global order 2).
 * N_{n−1} is carried between steps and saved with restarts.
 */
import type { StepperDefinition } from "./interface.js";
import { linearOption, PHI_OPTIONS, phiRequest } from "./exponential.js";

export const EXP_AB2: StepperDefinition = {
  name: "exp-ab2",
  family: "exponential",
  order: 2,
  description: "exponential Adams–Bashforth of order 2 (Cox & Matthews 2002): one tendency evaluation and one φ-action per step, started by one exponential Euler step",
  options: { linear: linearOption("rest"), ...PHI_OPTIONS },
  create(problem, o, ctx) {
    const part = problem.linear(o.linear as string, `${ctx.field}.linear`);
    const phi = part.phi(phiRequest(o, 2, ctx.field));
    const n = problem.n;
    const zero = problem.newVector(), F = problem.newVector(), Ax = problem.newVector();
    const N = problem.newVector(), Nprev = problem.newVector(), dN = problem.newVector(), dx = problem.newVector();
    let started = false;
    const v = [zero, F, dN];
    const first = [zero, F];
    return {
      label: `exp-ab2 (linear=${part.name}, backend=${o.backend}, tol=${o.tolerance})`,
      ...(part.reformed ? { order: 1, note: "exp-ab2 with linear: jacobian re-forms A every step, so N changes meaning between steps: first order" } : {}),
      step(x, t, h) {
        part.linearize(x, t);
        problem.tendency(F, x, t);
        part.apply(Ax, x);
        for (let q = 0; q < n; q++) N[q] = F[q] - Ax[q];
        if (started) {
          for (let q = 0; q < n; q++) dN[q] = (N[q] - Nprev[q]) / h;
          phi.apply(dx, h, v);
        } else {
          phi.apply(dx, h, first);
          started = true;
        }
        for (let q = 0; q < n; q++) x[q] += dx[q];
        Nprev.set(N);
      },
      saveState() {
        const s = new Float64Array(n + 1);
        s[0] = started ? 1 : 0;
        s.set(Nprev, 1);
        return s;
      },
      loadState(s) {
        started = s[0] === 1;
        Nprev.set(s.subarray(1, n + 1));
      },
    };
  },
};
