/**
 * Implicit–explicit (additive) Runge–Kutta methods as pairs of tableaux: an explicit one for the slow part and
 * a diagonally implicit one for the fast linear part (with the same nodes c). Both are square s×s with the
 * first stage explicit in both (a_00 = 0), so a step starts from the state itself.
 *
 * Coefficients: ARS(2,3,2) and ARS(4,4,3) of Ascher, Ruuth & Spiteri, "Implicit–explicit Runge–Kutta methods
 * for time-dependent partial differential equations", Appl. Numer. Math. 25 (1997) 151–167, written
 * from memory of the paper; the order conditions of both tableaux and the coupling conditions of the
 * pair (Kennedy & Carpenter, Appl. Numer. Math. 44 (2003) 139–181, §3) are checked in tests/imex.test.ts.
 */
import { SolverError } from "../errors.js";

export interface ImexTable {
  readonly name: string;
  /** Order of the pair (both tableaux and the coupling conditions). */
  readonly order: number;
  readonly reference: string;
  /** Nodes, shared by both tableaux. */
  readonly c: readonly number[];
  /** Explicit tableau (strictly lower triangular), s×s. */
  readonly explicitA: readonly (readonly number[])[];
  readonly explicitB: readonly number[];
  /** Diagonally implicit tableau (lower triangular), s×s. */
  readonly implicitA: readonly (readonly number[])[];
  readonly implicitB: readonly number[];
}

const G232 = (2 - Math.SQRT2) / 2;
const D232 = (-2 * Math.SQRT2) / 3;

export const ARS232: ImexTable = {
  name: "imex-ars232", order: 2,
  reference: "Ascher, Ruuth & Spiteri, Appl. Numer. Math. 25 (1997) 151–167, ARS(2,3,2)",
  c: [0, G232, 1],
  explicitA: [[0, 0, 0], [G232, 0, 0], [D232, 1 - D232, 0]],
  explicitB: [0, 1 - G232, G232],
  implicitA: [[0, 0, 0], [0, G232, 0], [0, 1 - G232, G232]],
  implicitB: [0, 1 - G232, G232],
};

export const ARS443: ImexTable = {
  name: "imex-ars443", order: 3,
  reference: "Ascher, Ruuth & Spiteri, Appl. Numer. Math. 25 (1997) 151–167, ARS(4,4,3)",
  c: [0, 1 / 2, 2 / 3, 1 / 2, 1],
  explicitA: [
    [0, 0, 0, 0, 0],
    [1 / 2, 0, 0, 0, 0],
    [11 / 18, 1 / 18, 0, 0, 0],
    [5 / 6, -5 / 6, 1 / 2, 0, 0],
    [1 / 4, 7 / 4, 3 / 4, -7 / 4, 0],
  ],
  explicitB: [1 / 4, 7 / 4, 3 / 4, -7 / 4, 0],
  implicitA: [
    [0, 0, 0, 0, 0],
    [0, 1 / 2, 0, 0, 0],
    [0, 1 / 6, 1 / 2, 0, 0],
    [0, -1 / 2, 1 / 2, 1 / 2, 0],
    [0, 3 / 2, -3 / 2, 1 / 2, 1 / 2],
  ],
  implicitB: [0, 3 / 2, -3 / 2, 1 / 2, 1 / 2],
};

/**
 * Trapezoidal rule (Crank–Nicolson) for the fast part with Heun's second-order explicit method for the slow
 * part: both have nodes (0, 1) and weights (½, ½), so the pair is of order 2 (common practice, no source; the
 * coupling condition Σ b_i c_i = ½ holds for the shared b and c).
 */
export const TRAPEZOIDAL: ImexTable = {
  name: "imex-trapezoidal", order: 2,
  reference: "trapezoidal rule (Crank & Nicolson 1947) with Heun's method for the explicit part",
  c: [0, 1],
  explicitA: [[0, 0], [1, 0]],
  explicitB: [1 / 2, 1 / 2],
  implicitA: [[0, 0], [1 / 2, 1 / 2]],
  implicitB: [1 / 2, 1 / 2],
};

export const IMEX_TABLES: readonly ImexTable[] = [ARS232, ARS443, TRAPEZOIDAL];

/** Shape and consistency: square tableaux of the same size, explicit part strictly lower, rows summing to c, Σb = 1. */
export function checkImexTable(t: ImexTable, tol = 1e-14): void {
  const s = t.c.length;
  const bad = (what: string) => new SolverError("bad-tableau", `IMEX table ${t.name}: ${what}`, t.name);
  if (s < 1) throw bad("no stages");
  if (t.explicitA.length !== s || t.implicitA.length !== s || t.explicitB.length !== s || t.implicitB.length !== s) throw bad(`sizes differ from ${s} stages`);
  for (let i = 0; i < s; i++) {
    const ea = t.explicitA[i], ia = t.implicitA[i];
    if (ea.length !== s || ia.length !== s) throw bad(`row ${i} is not of length ${s}`);
    let se = 0, si = 0;
    for (let j = 0; j < s; j++) {
      if (!Number.isFinite(ea[j]) || !Number.isFinite(ia[j])) throw bad(`row ${i} has a non-finite entry`);
      if (j >= i && ea[j] !== 0) throw bad(`explicit entry (${i}, ${j}) on or above the diagonal`);
      if (j > i && ia[j] !== 0) throw bad(`implicit entry (${i}, ${j}) above the diagonal`);
      if (ia[i] < 0) throw bad(`negative diagonal entry at ${i}`);
      se += ea[j]; si += ia[j];
    }
    if (Math.abs(se - t.c[i]) > tol || Math.abs(si - t.c[i]) > tol) throw bad(`row ${i} does not sum to c = ${t.c[i]}`);
  }
  const sum = (b: readonly number[]) => b.reduce((a, x) => a + x, 0);
  if (Math.abs(sum(t.explicitB) - 1) > tol || Math.abs(sum(t.implicitB) - 1) > tol) throw bad("weights do not sum to 1");
}
