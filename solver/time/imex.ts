/**
 * One engine for implicit–explicit Runge–Kutta methods given as pairs of tableaux (imexTables.ts).
 *
 * Split: F(x) = A x + (F(x) − A x), with A a fixed linear part of the problem ("rest" or "modes:N") taken
 * implicitly through its shifted solve and the remainder S(x) = F(x) − A x explicitly. The split is exact for
 * any linear A, so the order is the pair's order. Stage i:
 *
 *   r_i = x + Δt Σ_{j<i} (â_ij S_j + a_ij K_j),   X_i = (I − Δt a_ii A)⁻¹ r_i,   K_i = A X_i,   S_i = F(X_i) − K_i,
 *
 * and x ← x + Δt Σ_i (b̂_i S_i + b_i K_i). After the solve the stage is set to X_i = r_i + Δt a_ii K_i (the
 * same value up to the solve's residual): every thickness increment is then a sum of tendencies — divergences —
 * so each layer's volume is exact to round-off whatever the solver's accuracy.
 *
 * Written against the stepper interface only (interface.ts).
 */
import { SolverError } from "../errors.js";
import type { LinearPart, OptionContext, OptionDeclarations, Problem, StepperDefinition, StepperInstance } from "./interface.js";
import { ARS232, ARS443, TRAPEZOIDAL, checkImexTable, type ImexTable } from "./imexTables.js";

/** Work counted by one IMEX stepper. */
export interface ImexStats {
  steps: number;
  /** Shifted solves (I − γA)⁻¹. */
  solves: number;
  /** Products with A done by the engine (K_i). */
  products: number;
  tendencyEvaluations: number;
}

const linearChoices = (ctx: OptionContext) => [
  { value: "rest", label: "all modes", help: "the rest-state wave operator of every layer, implicit" },
  ...Array.from({ length: ctx.nLayers }, (_, i) => ({
    value: `modes:${i + 1}`,
    label: `${i + 1} fastest mode${i === 0 ? "" : "s"}`,
    help: i === 0 ? "the barotropic (fastest) mode implicit, the rest explicit" : `the ${i + 1} fastest vertical modes implicit`,
  })),
];

/**
 * Default linear part "modes:1": the barotropic mode sets the explicit limit of a layered model (its speed is
 * tens of times the first baroclinic one), and its modal system has one unknown per cell and edge, against L
 * per node (and L² times the block entries) for "rest". Steps beyond the first baroclinic limit need
 * "modes:2" … or "rest".
 */
export const IMEX_OPTIONS: OptionDeclarations = {
  linear: {
    type: "choice",
    label: "implicit part",
    help: 'linear part taken implicitly: "rest" (every layer) or "modes:N" (the N fastest vertical modes)',
    default: "modes:1",
    choices: linearChoices,
  },
};

/** Build the stepper for one table on a problem. */
export function createImex(table: ImexTable, problem: Problem, options: Record<string, unknown>, field: string): StepperInstance & { readonly stats: ImexStats } {
  checkImexTable(table);
  const linearName = String(options.linear ?? "modes:1");
  const linField = `${field}.linear`;
  const A: LinearPart = problem.linear(linearName, linField);
  if (A.reformed) throw new SolverError("bad-input", `${linField}: ${table.name} needs a fixed linear part ("rest" or "modes:N"), not "${linearName}"`, linField);
  const solve = A.solve?.bind(A);
  if (!solve) throw new SolverError("bad-input", `${linField}: the linear part "${linearName}" offers no shifted solve`, linField);

  const s = table.c.length;
  const ea = table.explicitA, ia = table.implicitA, eb = table.explicitB, ib = table.implicitB, c = table.c;
  // which stage quantities are used later (skip the work for the others)
  const needS: boolean[] = [], needK: boolean[] = [];
  for (let j = 0; j < s; j++) {
    let usedS = eb[j] !== 0, usedK = ib[j] !== 0;
    for (let i = j + 1; i < s; i++) { if (ea[i][j] !== 0) usedS = true; if (ia[i][j] !== 0) usedK = true; }
    needS.push(usedS);
    needK.push(usedK || usedS || ia[j][j] !== 0);
  }
  const n = problem.n;
  const K = Array.from({ length: s }, () => problem.newVector());
  const S = Array.from({ length: s }, () => problem.newVector());
  const r = problem.newVector(), X = problem.newVector();
  const stats: ImexStats = { steps: 0, solves: 0, products: 0, tendencyEvaluations: 0 };

  return {
    label: `${table.name} (linear=${linearName})`,
    stats,
    step(x, t, dt) {
      for (let i = 0; i < s; i++) {
        r.set(x);
        for (let j = 0; j < i; j++) {
          const ae = dt * ea[i][j], ai = dt * ia[i][j];
          if (ae !== 0) { const Sj = S[j]; for (let q = 0; q < n; q++) r[q] += ae * Sj[q]; }
          if (ai !== 0) { const Kj = K[j]; for (let q = 0; q < n; q++) r[q] += ai * Kj[q]; }
        }
        const g = dt * ia[i][i];
        if (g !== 0) { solve(X, r, g); stats.solves++; } else X.set(r);
        if (needK[i]) {
          const Ki = K[i];
          A.apply(Ki, X);
          stats.products++;
          if (g !== 0) for (let q = 0; q < n; q++) X[q] = r[q] + g * Ki[q];
        }
        if (needS[i]) {
          const Si = S[i], Ki = K[i];
          problem.tendency(Si, X, t + c[i] * dt);
          stats.tendencyEvaluations++;
          for (let q = 0; q < n; q++) Si[q] -= Ki[q];
        }
      }
      for (let i = 0; i < s; i++) {
        const be = dt * eb[i], bi = dt * ib[i];
        if (be !== 0) { const Si = S[i]; for (let q = 0; q < n; q++) x[q] += be * Si[q]; }
        if (bi !== 0) { const Ki = K[i]; for (let q = 0; q < n; q++) x[q] += bi * Ki[q]; }
      }
      stats.steps++;
    },
  };
}

function definition(table: ImexTable, description: string): StepperDefinition {
  return {
    name: table.name,
    order: table.order,
    description,
    family: "implicit-explicit",
    options: IMEX_OPTIONS,
    create(problem, options, context) {
      return createImex(table, problem, options, context.field);
    },
  };
}

/** The built-in IMEX steppers, for the registry. */
export const IMEX_METHODS: readonly StepperDefinition[] = [
  definition(ARS232, "IMEX Runge–Kutta ARS(2,3,2) (Ascher, Ruuth & Spiteri 1997): fast linear part implicit (L-stable), the rest explicit; order 2"),
  definition(ARS443, "IMEX Runge–Kutta ARS(4,4,3) (Ascher, Ruuth & Spiteri 1997): fast linear part implicit (L-stable), the rest explicit; order 3"),
  definition(TRAPEZOIDAL, "trapezoidal (Crank–Nicolson) fast linear part with Heun's method for the rest; order 2, no damping of the fast waves"),
];
