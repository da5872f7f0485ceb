/**
 * The starter stepper module `stepwell template NAME` writes and the sandbox's code panel opens with: a
 * working explicit stepper (the two-stage second-order family: α = ½ midpoint, ⅔ Ralston, 1 Heun), with comments on the rest of the interface.
 */

/** Source text of a starter module named `name`; `typesFrom` is the import path of solver/api (omit for plain JS). */
export function stepperTemplate(name: string, typesFrom?: string): string {
  const typed = typesFrom !== undefined;
  return `${typed ? `import type { StepperDefinition } from "${typesFrom}";\n\n` : ""}/**
 * ${name}: a starter stepper module for Stepwell — the two-stage, second-order explicit Runge–Kutta family
 *   k1 = F(x, t),  k2 = F(x + α dt k1, t + α dt),  x ← x + dt [(1 − 1/(2α)) k1 + 1/(2α) k2]
 * (α = 1/2 explicit midpoint, 2/3 Ralston, 1 Heun; Butcher 2016, Numerical Methods for ODEs, §23).
 *
 * Run it:     npm run --silent stepwell -- run ring-wave --stepper-module THIS_FILE --dt 20
 * Grade it:   npm run --silent stepwell -- assess ring-wave --stepper-module THIS_FILE
 *
 * The state x is one Float64Array: layer thicknesses first (x[k*nCells + i], metres), then normal
 * velocities (x[problem.layout.uOffset + k*nEdges + e], m/s). Advance it in place.
 */
${typed ? "const stepper: StepperDefinition = {" : "export default {"}
  name: "${name}",                 // lower-case letters, digits and hyphens
  order: 2,                        // the order you claim; \`assess\` measures it
  description: "two-stage second-order explicit Runge–Kutta (α = 1/2: midpoint)",
  // Declared options are checked for you and become CLI flags (--option key=value) and page pickers:
  options: {
    alpha: { type: "number", default: 0.5, min: 0.1, max: 1, help: "stage position α (1/2 midpoint, 2/3 Ralston, 1 Heun)" },
  },
  create(problem, options) {
    // Allocate every work array here, once. step() must not allocate.
    const k1 = problem.newVector();
    const k2 = problem.newVector();
    const y = problem.newVector();
    const alpha = options.alpha${typed ? " as number" : ""};
    const w2 = 1 / (2 * alpha), w1 = 1 - w2;
    const n = problem.n;

    // Other parts of the interface, for fast-mode steppers:
    //   const L = problem.linear("modes:1");          // "rest", "modes:N" (N fastest vertical modes) or "jacobian"
    //   L.apply(out, v);                               // out = L v
    //   const phi = L.phi({ backend: "krylov", tolerance: 1e-8, maxPhi: 1 });
    //   phi.apply(out, dt, [zero, F]);                 // out = dt φ1(dt L) F   (φ-functions act on tendencies)
    //   const fs = problem.fastSlow;                   // free surface / depth-mean velocity split for sub-cycling:
    //   fs.barotropic(eta, ubar, x); fs.freeze(x); fs.surfaceTendency(dEta, ubar); fs.pressure(dU, eta);
    //   fs.coriolis(dU, ubar); fs.splitTendency(slow, baroclinic, x, F); fs.reconcile(out, xn, v', vbar, u', ubar, dt);
    //   problem.counters                               // tendency evaluations, matvecs, inner products so far
    return {
      step(x${typed ? ": Float64Array" : ""}, t${typed ? ": number" : ""}, dt${typed ? ": number" : ""}) {
        problem.tendency(k1, x, t);
        for (let i = 0; i < n; i++) y[i] = x[i] + alpha * dt * k1[i];
        problem.tendency(k2, y, t + alpha * dt);
        for (let i = 0; i < n; i++) x[i] += dt * (w1 * k1[i] + w2 * k2[i]);
      },
    };
  },
};
${typed ? "\nexport default stepper;\n" : ""}`;
}
