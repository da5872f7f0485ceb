import type { StepperDefinition } from "../../solver/api.js";

/**
 * Exponential Euler on a linear part of the problem (Hochbruck & Ostermann 2010, Acta Numerica 19, §2.1):
 *   x ← x + Δt φ1(Δt L) F(x),
 * with L the rest-state wave operator restricted to the fastest vertical mode by default. φ1 acts on the
 * tendency only (increment form), so layer volume is exact. First order.
 */
const expEulerModes: StepperDefinition = {
  name: "exp-euler-modes",
  order: 1,
  description: "exponential Euler, x += Δt φ1(Δt L) F(x), on the problem's linear part",
  options: {
    linear: { type: "string", default: "modes:1", help: 'linear part: "rest", "modes:N" or "jacobian"' },
    backend: { type: "choice", default: "krylov", choices: ["krylov", "chebyshev", "taylor"], help: "φ-action backend" },
  },
  create(problem, options) {
    const L = problem.linear(options.linear as string);
    const phi = L.phi({ backend: options.backend as string, tolerance: 1e-10, maxPhi: 1 });
    const zero = problem.newVector(), F = problem.newVector(), dx = problem.newVector();
    return {
      label: `exp-euler-modes (linear=${L.name}, backend=${options.backend})`,
      step(x, t, dt) {
        L.linearize(x, t);
        problem.tendency(F, x, t);
        phi.apply(dx, dt, [zero, F]);
        for (let i = 0; i < x.length; i++) x[i] += dx[i];
      },
    };
  },
};

export default expEulerModes;
