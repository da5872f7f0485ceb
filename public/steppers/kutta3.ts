import type { StepperDefinition } from "../../solver/api.js";

/**
 * Kutta's third-order method (Kutta 1901; Hairer, Nørsett & Wanner 1993, Solving ODEs I, §II.1, Table 1.1):
 *
 *   k1 = F(x, t),  k2 = F(x + ½Δt k1, t + ½Δt),  k3 = F(x − Δt k1 + 2Δt k2, t + Δt)
 *   x ← x + Δt (k1 + 4 k2 + k3)/6
 *
 * Every three-stage third-order method has the stability polynomial 1 + z + z²/2 + z³/6, stable on the
 * imaginary axis for |ωΔt| ≤ √3: on a gravity-wave problem the largest stable Δt is √3/ω_max.
 */
const kutta3: StepperDefinition = {
  name: "kutta3",
  order: 3,
  description: "Kutta's three-stage third-order Runge–Kutta method",
  create(problem) {
    const n = problem.n;
    const k1 = problem.newVector(), k2 = problem.newVector(), k3 = problem.newVector(), y = problem.newVector();
    return {
      step(x, t, dt) {
        problem.tendency(k1, x, t);
        for (let i = 0; i < n; i++) y[i] = x[i] + 0.5 * dt * k1[i];
        problem.tendency(k2, y, t + 0.5 * dt);
        for (let i = 0; i < n; i++) y[i] = x[i] - dt * k1[i] + 2 * dt * k2[i];
        problem.tendency(k3, y, t + dt);
        for (let i = 0; i < n; i++) x[i] += (dt / 6) * (k1[i] + 4 * k2[i] + k3[i]);
      },
    };
  },
};

export default kutta3;
