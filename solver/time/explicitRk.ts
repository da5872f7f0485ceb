import { SolverError } from "../errors.js";
import type { ButcherTableau } from "./tableaux.js";
import { axpy, emptyStats, type OdeProblem, type Stepper } from "./types.js";

/** Invariants the engine relies on; checked when a stepper is built, never per step. */
export function checkTableau(t: ButcherTableau, field = "stepper.tableau", tol = 1e-12): void {
  const bad = (sub: string, why: string) => new SolverError("bad-tableau", `${field}${sub}: ${why}`, `${field}${sub}`);
  const s = t.b.length;
  if (s < 1) throw bad(".b", "needs at least one stage");
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

/** One engine for every explicit Runge–Kutta tableau. Stage arrays are allocated once here. */
export function explicitRk(tab: ButcherTableau, p: OdeProblem): Stepper {
  checkTableau(tab);
  const s = tab.b.length;
  const y = new Float64Array(p.n);
  const k = Array.from({ length: s }, () => new Float64Array(p.n));
  const stats = emptyStats();
  return {
    method: tab.name,
    label: tab.name,
    order: tab.order,
    stats,
    step(x, t, dt) {
      // stages
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
      // update
      for (let i = 0; i < s; i++) if (tab.b[i] !== 0) axpy(dt * tab.b[i], k[i], x);
      stats.steps++;
      stats.rhsEvaluations += s;
    },
  };
}
