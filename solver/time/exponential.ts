/**
 * Generic exponential Runge–Kutta / exponential Rosenbrock engine, driven by the φ-coefficient tables of
 * expTables.ts, with one of the problem's three linear parts (Hochbruck & Ostermann 2010, Acta Numerica 19):
 *
 *   rest      the rest-state linear wave operator, fixed;
 *   modes:N   that operator restricted to the N fastest vertical modes, fixed;
 *   jacobian  J_n = F'(x_n), re-formed every step (exponential Rosenbrock).
 *
 * Increment form: with F0 = F(x_n) and D_j = F(U_j) − F0 − A (U_j − x_n) (= N(U_j) − N(x_n)
 * for the linear part A), stage i is U_i = x_n + h c_i φ1(c_i hA) F0 + h Σ_{j≥1} a_ij(hA) D_j and the new state
 * x_n + h φ1(hA) F0 + h Σ_{j≥1} b_j(hA) D_j. φ-functions only ever act on tendencies and differences of
 * tendencies, whose layer masses are zero, and every backend returns c·v + A(…) of such vectors, whose
 * thickness part is a layer divergence: layer mass is exact to round-off, whatever the φ tolerance.
 * Terms of a row with the same node fraction `at` share one φ-combination call at τ = at·h
 * (h coef φ_k(τA) D_j = τ^k φ_k(τA)·(h coef/τ^k) D_j); a row that mixes nodes (Cox–Matthews a_41) makes two calls.
 */
import { phiBackends } from "../linalg/registry.js";
import { parsePhiFilter } from "../linalg/registry.js";
import { parseLinearName } from "./options.js";
import { checkExpTable, type ExpRkTable } from "./expTables.js";
import type { LinearPart, OptionChoice, OptionDeclarations, OptionSpec, PhiAction, Problem, StepperDefinition, StepperInstance } from "./interface.js";

/** Highest φ index a table uses. */
export function tableMaxPhi(t: ExpRkTable): number {
  let p = 1;
  for (const row of [...t.a, t.b]) for (const terms of row) for (const term of terms) p = Math.max(p, term.k);
  return p;
}

interface Group { at: number; withF0: boolean; terms: { j: number; k: number; coef: number }[] }

/** Terms of one row grouped by node fraction; the implied first column c φ1(c z) F0 joins the group at = c. */
function groupRow(row: readonly (readonly { k: number; coef: number; at: number }[])[], c: number): Group[] {
  const groups: Group[] = [];
  const get = (at: number) => {
    let g = groups.find((x) => Math.abs(x.at - at) < 1e-15);
    if (!g) { g = { at, withF0: false, terms: [] }; groups.push(g); }
    return g;
  };
  if (c > 0) get(c).withF0 = true;
  for (let j = 1; j < row.length; j++) for (const t of row[j]) if (t.coef !== 0) get(t.at).terms.push({ j, k: t.k, coef: t.coef });
  return groups.filter((g) => g.withF0 || g.terms.length > 0);
}

/** The engine: one stepper for any table, linear part and φ-action. All work arrays are allocated here. */
export function exponentialRk(table: ExpRkTable, problem: Pick<Problem, "n" | "tendency">, lin: Pick<LinearPart, "apply" | "linearize">, phi: PhiAction): (x: Float64Array, t: number, h: number) => void {
  checkExpTable(table);
  const n = problem.n;
  const s = table.b.length;
  const maxPhi = tableMaxPhi(table);
  const stageGroups = table.a.map((row, i) => (i === 0 ? [] : groupRow(row, table.c[i])));
  const finalGroups = groupRow(table.b, 1);
  const F0 = new Float64Array(n), Fi = new Float64Array(n), U = new Float64Array(n), diff = new Float64Array(n), Ad = new Float64Array(n);
  const tmp = new Float64Array(n);
  const D = Array.from({ length: s }, (_, j) => new Float64Array(j === 0 ? 0 : n));
  const v = Array.from({ length: maxPhi + 1 }, () => new Float64Array(n));

  function addGroups(target: Float64Array, groups: Group[], h: number): void {
    for (const g of groups) {
      const tau = g.at * h;
      for (let k = 0; k <= maxPhi; k++) v[k].fill(0);
      if (g.withF0) v[1].set(F0);
      for (const t of g.terms) {
        const f = (h * t.coef) / Math.pow(tau, t.k), dj = D[t.j], vk = v[t.k];
        for (let q = 0; q < n; q++) vk[q] += f * dj[q];
      }
      phi.apply(tmp, tau, v);
      for (let q = 0; q < n; q++) target[q] += tmp[q];
    }
  }

  return (x, t, h) => {
    lin.linearize(x, t);
    problem.tendency(F0, x, t);
    for (let i = 1; i < s; i++) {
      U.set(x);
      addGroups(U, stageGroups[i], h);
      problem.tendency(Fi, U, t + table.c[i] * h);
      for (let q = 0; q < n; q++) diff[q] = U[q] - x[q];
      lin.apply(Ad, diff);
      const Di = D[i];
      for (let q = 0; q < n; q++) Di[q] = Fi[q] - F0[q] - Ad[q];
    }
    addGroups(x, finalGroups, h);
  };
}

const ROSENBROCK_LINEAR = "jacobian";
/** Backends whose φ-actions need a skew operator with a purely imaginary spectrum. */
const SKEW_ONLY_BACKENDS = ["chebyshev", "rational", "rational-damped"];
const FILTER_BACKENDS = ["chebyshev", "rational-damped"];
/** Backends whose filter needs an explicit cut-off frequency (the offered filter orders alone do not do). */
const CUTOFF_BACKENDS = ["rational-damped"];
/** Declared bound on the time sub-steps inside one φ-action. */
export const MAX_PHI_SUBSTEPS = 10_000;

function linearChoices(nLayers: number): OptionChoice[] {
  const choices: OptionChoice[] = [
    { value: "rest", label: "rest: full rest-state linear operator", help: "all gravity waves and Coriolis of the state at rest, fixed for the run" },
  ];
  for (let k = 1; k <= nLayers; k++) {
    choices.push({
      value: `modes:${k}`,
      label: k === 1 ? "modes:1: barotropic only" : `modes:${k}: ${k} fastest vertical modes`,
      help: k === 1
        ? "only the fastest (depth-mean) wave is treated exactly, everything else as the nonlinear remainder"
        : `the rest-state operator restricted to the ${k} fastest of the ${nLayers} vertical modes`,
    });
  }
  choices.push({
    value: ROSENBROCK_LINEAR, label: "jacobian: re-formed each step",
    help: "the exact Jacobian at the start of every step (more work per step, keeps the order of Rosenbrock methods)",
    conflicts: [{ key: "backend", values: SKEW_ONLY_BACKENDS, reason: "chebyshev and rational need a skew operator, which the Jacobian is not" }],
  });
  return choices;
}

/** The declaration of the linear-part option, shared by every family that integrates a linear part. */
export function linearOption(defaultValue: string | undefined, choices: (n: number) => OptionChoice[] = linearChoices): OptionSpec {
  return {
    type: "choice", label: "linear part", default: defaultValue,
    help: 'the part of the tendency treated exactly: "rest", "modes:N" (the N fastest vertical modes) or "jacobian"',
    choices: ({ nLayers }) => choices(Math.max(1, Math.floor(nLayers))),
    parse: (v, field, ctx) => {
      parseLinearName(v, ctx.nLayers, field);
      return v;
    },
  };
}

/** φ-action options (backend, tolerance, substeps, filter): declared once for every method that uses φ-actions. */
export const PHI_OPTIONS: OptionDeclarations = {
  backend: {
    type: "choice", label: "φ backend", default: "krylov",
    help: "how the actions of the matrix functions φ_k on vectors are computed",
    choices: phiBackends.map((b) => ({
      value: b.name, label: b.name, help: b.description,
      conflicts: [
        ...(SKEW_ONLY_BACKENDS.includes(b.name) ? [{ key: "linear", values: [ROSENBROCK_LINEAR], reason: "not available with linear: jacobian (its spectrum is not purely imaginary)" }] : []),
        ...(CUTOFF_BACKENDS.includes(b.name) ? [{ key: "filter", values: ["off", 8, 16], reason: 'needs a filter with a cut-off frequency, e.g. { "order": 16, "cutoff": 1e-3 }' }] : []),
      ],
    })),
  },
  tolerance: {
    type: "number", label: "tolerance", default: 1e-8, min: 0, max: 1, exclusive: true,
    help: "relative error allowed in each φ-action, between 0 and 1 (e.g. 1e-8)",
  },
  substeps: {
    type: "integer", label: "φ sub-steps", min: 0, max: MAX_PHI_SUBSTEPS, sameAsOmitted: [0],
    help: "time sub-steps inside each φ-action; 0 or empty = automatic",
  },
  filter: {
    type: "choice", label: "high-frequency filter", default: "off",
    help: 'damps high frequencies inside the φ-actions (chebyshev: near the spectral bound; rational-damped: above the cut-off): "off", a filter order (8, 16) or { "order", "strength", "cutoff" }',
    choices: [
      { value: "off", label: "off", help: "no damping" },
      ...[8, 16].map((o) => ({
        value: o, label: `order ${o}`, help: o === 8 ? "gentler roll-off, damps a wider band below the bound" : "sharper roll-off, damps only close to the bound",
        conflicts: [{ key: "backend", values: phiBackends.map((b) => b.name).filter((x) => !FILTER_BACKENDS.includes(x) || CUTOFF_BACKENDS.includes(x)), reason: "a filter order alone works with backend chebyshev only (rational-damped needs { order, cutoff })" }],
      })),
    ],
    parse: (v, field) => parsePhiFilter(v, field) ?? "off",
  },
};

/** "backend=…, tol=…[, substeps=…][, filter=…]" */
function phiLabel(o: Record<string, unknown>): string {
  const parts = [`backend=${o.backend}`, `tol=${o.tolerance}`];
  if (o.substeps) parts.push(`substeps=${o.substeps}`);
  const f = o.filter as unknown;
  if (f && f !== "off") parts.push(`filter=${typeof f === "object" ? (f as { order: number }).order : f}`);
  return parts.join(", ");
}

/** The φ request of validated options. */
export function phiRequest(o: Record<string, unknown>, maxPhi: number, field: string) {
  return {
    backend: o.backend as string, tolerance: o.tolerance as number, substeps: o.substeps as number | undefined,
    filter: o.filter === "off" ? undefined : (o.filter as { order: number; strength?: number; cutoff?: number } | undefined),
    maxPhi, field,
  };
}

/** Build an exponential stepper instance of a table from validated options. */
export function createExponential(table: ExpRkTable, problem: Problem, o: Record<string, unknown>, field: string, method = table.name): StepperInstance {
  const linear = (o.linear as string | undefined) ?? (table.linearPart === "jacobian" ? "jacobian" : "rest");
  const part = problem.linear(linear, `${field}.linear`);
  const maxPhi = tableMaxPhi(table);
  const phi = part.phi(phiRequest(o, maxPhi, field));
  const fixedRosenbrock = table.linearPart === "jacobian" && !part.reformed;
  const order = fixedRosenbrock ? table.orderWithFixedLinear ?? 1 : table.order;
  const note = fixedRosenbrock
    ? `${method} is an exponential Rosenbrock method built for linear: jacobian; with the fixed linear part ${part.name} its order ` +
      `drops to about ${order} (measured with a fixed operator: about 1, 1 and 2 for exprb2, exprb32 and exprb43)`
    : undefined;
  return {
    label: `${method} (linear=${part.name}, ${phiLabel(o)})`, order, note,
    step: exponentialRk(table, problem, part, phi),
  };
}

const LINEAR_HELP = 'linear "rest" | "modes:N" | "jacobian", backend krylov | taylor | chebyshev | substep | rational | dense';

/** A registry entry per table. */
export function exponentialDefinition(t: ExpRkTable): StepperDefinition {
  const rosenbrock = t.linearPart === "jacobian";
  return {
    name: t.name,
    family: rosenbrock ? "exponential-rosenbrock" : "exponential",
    order: t.order,
    description: `${t.reference}; ${t.b.length} tendency evaluation${t.b.length === 1 ? "" : "s"} per step; ` +
      `${rosenbrock ? "default linear: jacobian" : "default linear: rest"}; ${LINEAR_HELP}`,
    options: { linear: linearOption(rosenbrock ? "jacobian" : "rest"), ...PHI_OPTIONS },
    create: (problem, o, ctx) => createExponential(t, problem, o, ctx.field),
  };
}
