/**
 * Exponential Runge–Kutta methods as tables of φ-function coefficients (Hochbruck & Ostermann 2010).
 *
 * a[i][j](z) and b[j](z) are sums of coef · φ_k(at · z), z = hL, written as published (column 0 included).
 * The engine (exponential.ts) uses the row-sum form: stage i is
 *   U_i = x + h c_i φ1(c_i hL) F(x) + h Σ_{j≥1} a_ij(hL) D_j,   D_j = N(U_j) − N(x),
 * so column 0 is implied and only checked. Rosenbrock methods use the same tables with L = F'(x_n).
 */
import { SolverError } from "../errors.js";
import { phiReal } from "../linalg/scalarPhi.js";

export interface PhiTerm {
  /** φ index k ≥ 1. */
  readonly k: number;
  readonly coef: number;
  /** Node fraction: the term is coef · φ_k(at · hL). */
  readonly at: number;
}
export type PhiRow = readonly (readonly PhiTerm[])[];

export interface ExpRkTable {
  readonly name: string;
  /** Order with the linear part the method is built for (fixed L for ETD, the Jacobian for Rosenbrock). */
  readonly order: number;
  readonly reference: string;
  /** "fixed": exponential Runge–Kutta for a fixed L; "jacobian": exponential Rosenbrock (L = F'(x_n)). */
  readonly linearPart: "fixed" | "jacobian";
  /** Observed order when a Rosenbrock table is used with a fixed linear part (measured with this code). */
  readonly orderWithFixedLinear?: number;
  readonly c: readonly number[];
  /** a[i] has i entries (j < i), each a list of terms; a[0] = []. */
  readonly a: readonly PhiRow[];
  readonly b: PhiRow;
}

const phi = (k: number, coef = 1, at = 1): PhiTerm => ({ k, coef, at });

export const EXP_EULER: ExpRkTable = {
  name: "exp-euler", order: 1, linearPart: "fixed",
  reference: "exponential Euler; Hochbruck & Ostermann, Acta Numerica 19 (2010) §2.2",
  c: [0], a: [[]], b: [[phi(1)]],
};

export const ETD2RK: ExpRkTable = {
  name: "etd2rk", order: 2, linearPart: "fixed",
  reference: "Cox & Matthews, J. Comput. Phys. 176 (2002) 430–455, ETD2RK",
  c: [0, 1], a: [[], [[phi(1)]]], b: [[phi(1), phi(2, -1)], [phi(2)]],
};

/** Final stage shared by both fourth-order ETD methods (Cox & Matthews 2002; Krogstad 2005 keeps it). */
const ETDRK4_WEIGHTS: PhiRow = [[phi(1), phi(2, -3), phi(3, 4)], [phi(2, 2), phi(3, -4)], [phi(2, 2), phi(3, -4)], [phi(2, -1), phi(3, 4)]];

/** Cox–Matthews ETDRK4. a_41 = ½φ1(z/2)(e^{z/2} − 1) = φ1(z) − φ1(z/2), so row 4 mixes the nodes 1 and ½. */
export const ETDRK4: ExpRkTable = {
  name: "etdrk4", order: 4, linearPart: "fixed",
  reference: "Cox & Matthews, J. Comput. Phys. 176 (2002) 430–455, ETDRK4",
  c: [0, 1 / 2, 1 / 2, 1],
  a: [
    [],
    [[phi(1, 1 / 2, 1 / 2)]],
    [[], [phi(1, 1 / 2, 1 / 2)]],
    [[phi(1), phi(1, -1, 1 / 2)], [], [phi(1, 1, 1 / 2)]],
  ],
  b: ETDRK4_WEIGHTS,
};

export const ETDRK4_KROGSTAD: ExpRkTable = {
  name: "etdrk4-krogstad", order: 4, linearPart: "fixed",
  reference: "Krogstad, J. Comput. Phys. 203 (2005) 72–88 (ETDRK4-B)",
  c: [0, 1 / 2, 1 / 2, 1],
  a: [
    [],
    [[phi(1, 1 / 2, 1 / 2)]],
    [[phi(1, 1 / 2, 1 / 2), phi(2, -1, 1 / 2)], [phi(2, 1, 1 / 2)]],
    [[phi(1), phi(2, -2)], [], [phi(2, 2)]],
  ],
  b: ETDRK4_WEIGHTS,
};

export const EXPRB2: ExpRkTable = {
  name: "exprb2", order: 2, linearPart: "jacobian", orderWithFixedLinear: 1,
  reference: "exponential Rosenbrock–Euler; Hochbruck, Lubich & Selhofer, SIAM J. Sci. Comput. 19 (1998) 1552–1574",
  c: [0], a: [[]], b: [[phi(1)]],
};

export const EXPRB32: ExpRkTable = {
  name: "exprb32", order: 3, linearPart: "jacobian", orderWithFixedLinear: 1,
  reference: "Hochbruck, Ostermann & Schweitzer, SIAM J. Numer. Anal. 47 (2009) 786–803, exprb32",
  c: [0, 1], a: [[], [[phi(1)]]], b: [[phi(1), phi(3, -2)], [phi(3, 2)]],
};

export const EXPRB43: ExpRkTable = {
  name: "exprb43", order: 4, linearPart: "jacobian", orderWithFixedLinear: 2,
  reference: "Hochbruck, Ostermann & Schweitzer, SIAM J. Numer. Anal. 47 (2009) 786–803, exprb43",
  c: [0, 1 / 2, 1],
  a: [[], [[phi(1, 1 / 2, 1 / 2)]], [[], [phi(1)]]],
  b: [[phi(1), phi(3, -14), phi(4, 36)], [phi(3, 16), phi(4, -48)], [phi(3, -2), phi(4, 12)]],
};

export const EXP_TABLES: readonly ExpRkTable[] = [EXP_EULER, ETD2RK, ETDRK4, ETDRK4_KROGSTAD, EXPRB2, EXPRB32, EXPRB43];

/** Scalar value of a row entry Σ coef φ_k(at z) at real z. */
function rowValue(terms: readonly PhiTerm[], z: number): number {
  let s = 0;
  for (const t of terms) s += t.coef * phiReal(t.k, t.at * z);
  return s;
}

/** Sample points for the functional identities (real z; the φ_k are analytic, so agreement there is the identity). */
const CHECK_Z = [-3, -0.7, 0, 0.4, 1.9];

/**
 * Invariants the engine relies on, checked when a stepper is built: shapes, finite coefficients, φ indices
 * 1…6, node fractions in (0, 1], and the row-sum conditions Σ_j a_ij(z) = c_i φ1(c_i z), Σ_j b_j(z) = φ1(z)
 * as functions of z (the form the increment kernel needs), and the classical order-1 condition of c.
 */
export function checkExpTable(t: ExpRkTable, field = "stepper.phiTable", tol = 1e-10): void {
  const bad = (sub: string, why: string) => new SolverError("bad-tableau", `${field}${sub}: ${why}`, `${field}${sub}`);
  const s = t.b.length;
  if (s < 1) throw bad(".b", "needs at least one stage");
  if (t.c.length !== s) throw bad(".c", `has ${t.c.length} entries, expected ${s} (one per stage)`);
  if (t.a.length !== s) throw bad(".a", `has ${t.a.length} rows, expected ${s} (one per stage)`);
  if (t.c[0] !== 0) throw bad(".c[0]", "must be 0 (the first stage is the current state)");
  t.c.forEach((c, i) => {
    if (!(Number.isFinite(c) && c >= 0 && c <= 1)) throw bad(`.c[${i}]`, `must lie in [0, 1], got ${c}`);
    if (i > 0 && c === 0) throw bad(`.c[${i}]`, "only the first stage may have c = 0");
  });
  const checkTerms = (terms: readonly PhiTerm[], sub: string) => {
    terms.forEach((term, q) => {
      if (!Number.isInteger(term.k) || term.k < 1 || term.k > 6) throw bad(`${sub}[${q}].k`, `φ index must be a whole number in 1…6, got ${term.k}`);
      if (!Number.isFinite(term.coef)) throw bad(`${sub}[${q}].coef`, "must be a finite number");
      if (!(Number.isFinite(term.at) && term.at > 0 && term.at <= 1)) throw bad(`${sub}[${q}].at`, `node fraction must lie in (0, 1], got ${term.at}`);
    });
  };
  t.a.forEach((row, i) => {
    if (row.length !== i) throw bad(`.a[${i}]`, `has ${row.length} entries, expected ${i} (explicit methods are strictly lower-triangular)`);
    row.forEach((terms, j) => checkTerms(terms, `.a[${i}][${j}]`));
    if (i === 0) return;
    for (const z of CHECK_Z) {
      let sum = 0;
      for (const terms of row) sum += rowValue(terms, z);
      const want = t.c[i] * phiReal(1, t.c[i] * z);
      if (Math.abs(sum - want) > tol * Math.max(1, Math.abs(want))) {
        throw bad(`.a[${i}]`, `row does not sum to c[${i}]·φ1(c[${i}] z) (at z = ${z}: ${sum} vs ${want}); the increment form needs it`);
      }
    }
  });
  t.b.forEach((terms, j) => checkTerms(terms, `.b[${j}]`));
  for (const z of CHECK_Z) {
    let sum = 0;
    for (const terms of t.b) sum += rowValue(terms, z);
    const want = phiReal(1, z);
    if (Math.abs(sum - want) > tol * Math.max(1, Math.abs(want))) throw bad(".b", `weights do not sum to φ1(z) (at z = ${z}: ${sum} vs ${want})`);
  }
}

/** Parse a user φ-table from a scenario (option `phiTable` of method "custom-exp"). */
export function parseExpTable(raw: unknown, field = "stepper.phiTable"): ExpRkTable {
  const bad = (sub: string, why: string) => new SolverError("bad-tableau", `${field}${sub}: ${why}`, `${field}${sub}`);
  const help = '{ "c": [0, …], "a": [[], [[{"k":1,"coef":…,"at":…}]], …], "b": [[terms], …], "order": p }';
  if (!raw || typeof raw !== "object" || Array.isArray(raw)) throw bad("", `is required for method "custom-exp" as an object ${help}`);
  const t = raw as Record<string, unknown>;
  const term = (v: unknown, sub: string): PhiTerm => {
    if (!v || typeof v !== "object" || Array.isArray(v)) throw bad(sub, 'each term must be an object { "k": 1, "coef": 1, "at": 1 }');
    const o = v as Record<string, unknown>;
    for (const key of Object.keys(o)) if (!["k", "coef", "at"].includes(key)) throw bad(`${sub}.${key}`, "unknown field (a term has k, coef, at)");
    if (typeof o.k !== "number") throw bad(`${sub}.k`, "must be a number (φ index)");
    if (typeof o.coef !== "number") throw bad(`${sub}.coef`, "must be a number");
    if (o.at !== undefined && typeof o.at !== "number") throw bad(`${sub}.at`, "must be a number in (0, 1]");
    return { k: o.k, coef: o.coef, at: o.at === undefined ? 1 : (o.at as number) };
  };
  const terms = (v: unknown, sub: string): PhiTerm[] => {
    if (!Array.isArray(v)) throw bad(sub, "must be a list of terms");
    return v.map((x, q) => term(x, `${sub}[${q}]`));
  };
  if (!Array.isArray(t.c) || !t.c.every((x) => typeof x === "number")) throw bad(".c", "must be an array of numbers");
  if (!Array.isArray(t.a)) throw bad(".a", "must be an array of rows");
  if (!Array.isArray(t.b)) throw bad(".b", "must be an array of term lists");
  const a = t.a.map((row, i) => {
    if (!Array.isArray(row)) throw bad(`.a[${i}]`, "must be an array of term lists");
    return row.map((entry, j) => terms(entry, `.a[${i}][${j}]`));
  });
  const b = t.b.map((entry, j) => terms(entry, `.b[${j}]`));
  const order = t.order === undefined ? 1 : t.order;
  if (typeof order !== "number" || !Number.isInteger(order) || order < 1) throw bad(".order", "must be a whole number ≥ 1");
  const lp = t.linearPart === undefined ? "fixed" : t.linearPart;
  if (lp !== "fixed" && lp !== "jacobian") throw bad(".linearPart", 'must be "fixed" or "jacobian"');
  const table: ExpRkTable = {
    name: typeof t.name === "string" ? t.name : "custom-exp", order, linearPart: lp, reference: "user table",
    c: t.c as number[], a, b,
  };
  checkExpTable(table, field);
  return table;
}
