import { SolverError } from "../errors.js";
import type { StepperDefinition } from "./interface.js";
import type { ButcherTableau } from "./tableaux.js";
import { axpy } from "../linalg/vector.js";

/** Invariants the engine relies on; checked when a stepper is built, never per step. */
export function checkTableau(t: ButcherTableau, field = "stepper.tableau", tol = 1e-12): void {
  const bad = (sub: string, why: string) => new SolverError("bad-tableau", `${field}${sub}: ${why}`, `${field}${sub}`);
  const s = t.b.length;
  if (s < 1) throw bad(".b", "needs at least one stage");
  if (s > MAX_STAGES) throw bad(".b", `has ${s} stages; the limit is ${MAX_STAGES}`);
  if (t.c.length !== s) throw bad(".c", `has ${t.c.length} entries, expected ${s} (one per stage)`);
  if (t.a.length !== s) throw bad(".a", `has ${t.a.length} rows, expected ${s} (one per stage)`);
  const all = [...t.b, ...t.c, ...t.a.flat()];
  if (!all.every(Number.isFinite)) throw bad("", "all coefficients must be finite numbers");
  const sum = (r: readonly number[]) => r.reduce((x, y) => x + y, 0);
  t.a.forEach((row, i) => {
    if (row.length !== i) throw bad(`.a[${i}]`, `has ${row.length} entries, expected ${i} (explicit methods are strictly lower-triangular)`);
    if (Math.abs(sum(row) - t.c[i]) > tol) throw bad(`.a[${i}]`, `row sums to ${sum(row)}, but c[${i}] = ${t.c[i]}`);
  });
  if (Math.abs(sum(t.b) - 1) > tol) throw bad(".b", `weights sum to ${sum(t.b)}, expected 1 (consistency)`);
}

/** Declared bound on the stages of a user tableau. */
export const MAX_STAGES = 32;

/**
 * Coefficients γ_k of the stability polynomial R(z) = Σ_k γ_k z^k of an explicit tableau:
 * γ_0 = 1, γ_k = bᵀ A^{k−1} 1 (Hairer & Wanner 1996, Solving ODEs II, §IV.2).
 */
export function stabilityPolynomial(t: ButcherTableau): number[] {
  const s = t.b.length;
  const gamma = [1];
  let v = new Array<number>(s).fill(1); // A^{k−1} 1
  for (let k = 1; k <= s; k++) {
    gamma.push(t.b.reduce((acc, bi, i) => acc + bi * v[i], 0));
    v = t.a.map((row) => row.reduce((acc, aij, j) => acc + aij * v[j], 0));
  }
  return gamma;
}

/**
 * Largest y with |R(iy')| ≤ 1 for every 0 ≤ y' ≤ y: the method's stability bound on the imaginary axis, so
 * that a wave of frequency ω is stable for ωΔt ≤ bound (0 when the method amplifies every oscillation).
 * A scan then bisection; RK4 gives 2√2 and three-stage third-order methods √3 (Hairer & Wanner 1996, §IV.2).
 */
export function imaginaryAxisBound(t: ButcherTableau): number {
  const g = stabilityPolynomial(t);
  const mod2 = (y: number): number => {
    let re = 0, im = 0, pr = 1, pi = 0; // (iy)^k
    for (let k = 0; k < g.length; k++) {
      re += g[k] * pr;
      im += g[k] * pi;
      const nr = -pi * y, ni = pr * y;
      pr = nr; pi = ni;
    }
    return re * re + im * im;
  };
  const ok = (y: number) => mod2(y) <= 1 + 1e-13;
  const dy = 1e-3;
  let y = 0;
  while (y < 20 && ok(y + dy)) y += dy;
  if (y === 0) return 0;
  let lo = y, hi = y + dy;
  for (let i = 0; i < 60; i++) {
    const mid = 0.5 * (lo + hi);
    if (ok(mid)) lo = mid; else hi = mid;
  }
  return lo;
}

/** One engine for every explicit Runge–Kutta tableau: a stepper definition built from the table. */
export function explicitRkDefinition(tab: ButcherTableau, description: string): StepperDefinition {
  checkTableau(tab);
  return {
    name: tab.name, order: tab.order, description, family: "explicit",
    imaginaryAxisBound: imaginaryAxisBound(tab),
    create(problem) {
      return explicitRkInstance(tab, problem);
    },
  };
}

/** Stage arrays are allocated here, once; `step` allocates nothing. */
export function explicitRkInstance(tab: ButcherTableau, p: { newVector(): Float64Array; tendency(out: Float64Array, x: Float64Array, t: number): void }, label = tab.name) {
  const s = tab.b.length;
  const y = p.newVector();
  const k = Array.from({ length: s }, () => p.newVector());
  return {
    label,
    step(x: Float64Array, t: number, dt: number) {
      for (let i = 0; i < s; i++) {
        if (i === 0) {
          p.tendency(k[0], x, t);
          continue;
        }
        y.set(x);
        const row = tab.a[i];
        for (let j = 0; j < i; j++) if (row[j] !== 0) axpy(dt * row[j], k[j], y);
        p.tendency(k[i], y, t + tab.c[i] * dt);
      }
      for (let i = 0; i < s; i++) if (tab.b[i] !== 0) axpy(dt * tab.b[i], k[i], x);
    },
  };
}
