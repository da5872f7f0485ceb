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
 * Terms of a row with the same node fraction `at` share one φ-combination at τ = at·h
 * (h coef φ_k(τA) D_j = τ^k φ_k(τA)·(h coef/τ^k) D_j); a row that mixes nodes (Cox–Matthews a_41) makes two.
 * Combinations of different rows with the same vector set (always the F(x_n)-only ones) are one multi-time
 * φ-action (`applyTimes`: one Krylov space or one set of Chebyshev vectors for every τ; Saad 1992, SIAM J.
 * Numer. Anal. 29; Hochbruck & Lubich 1997, SIAM J. Numer. Anal. 34), counted as one φ-action (`phiPlan`).
 */
import { phiBackends } from "../linalg/registry.js";
import { parsePhiFilter } from "../linalg/registry.js";
import { applyAtTimes } from "../linalg/phiTimes.js";
import { parseLinearName } from "./options.js";
import { checkExpTable, type ExpRkTable } from "./expTables.js";
import type { LinearPart, OptionChoice, OptionDeclarations, OptionSpec, PhiAction, Problem, StepperDefinition, StepperInstance } from "./interface.js";

/** Highest φ index a table uses. */
export function tableMaxPhi(t: ExpRkTable): number {
  let p = 1;
  for (const row of [...t.a, t.b]) for (const terms of row) for (const term of terms) p = Math.max(p, term.k);
  return p;
}

/** One term of a φ-action's vector set: v_k += w · h^{1−k} · D_j (D_0 = F(x_n)), the same for every τ = at·h. */
interface JobTerm { readonly j: number; readonly k: number; readonly w: number }

/**
 * One φ-action of a step: a vector set evaluated at one or more node fractions `ats` (one shared basis), first
 * needed by row `row` (stages 1…s−1, the new state s), whose D_j it reads are known by then.
 */
export interface PhiJob { readonly terms: readonly JobTerm[]; readonly ats: number[]; readonly row: number }
/** A row adds scale · (result of job at slot) for each of its uses. */
interface Use { readonly job: number; readonly slot: number; readonly scale: number }

export interface PhiPlan { readonly jobs: readonly PhiJob[]; readonly uses: readonly (readonly Use[])[] }

const SAME = 1e-14;
const same = (a: number, b: number) => Math.abs(a - b) <= SAME * Math.max(1, Math.abs(a), Math.abs(b));

/**
 * The φ-actions of a step, from the table. Each row (the stages i ≥ 1 and the new state) groups its terms by
 * node fraction: h coef φ_k(at·hA) D_j = τ^k φ_k(τA) (coef/at^k) h^{1−k} D_j, τ = at·h, so a group is one vector
 * set (terms (j, k, coef/at^k), the implied first column c_i φ1(c_i hA) F0 as (0, 1, 1)) at one τ.
 * With `share`, groups of any rows whose vector sets are equal up to one factor are one φ-action evaluated at
 * all their τ (a Krylov space or Chebyshev vectors serve every τ): the F(x_n)-only groups of the stages always
 * are (Cox–Matthews ETDRK4: stage 1 at h/2 and stage 3 at h, four actions instead of five). Without `share`
 * every group is its own action (the engine before multi-time actions; kept for the tests).
 */
export function phiPlan(table: ExpRkTable, share = true): PhiPlan {
  const s = table.b.length;
  const jobs: (PhiJob & { ats: number[] })[] = [];
  const uses: Use[][] = [];
  for (let r = 1; r <= s; r++) {
    const row = r < s ? table.a[r] : table.b, c = r < s ? table.c[r] : 1;
    const groups: { at: number; terms: JobTerm[] }[] = [];
    const add = (at: number, term: JobTerm) => {
      let g = groups.find((x) => same(x.at, at));
      if (!g) { g = { at, terms: [] }; groups.push(g); }
      const t = g.terms.find((x) => x.j === term.j && x.k === term.k);
      if (t) (t as { w: number }).w += term.w; else g.terms.push({ ...term });
    };
    add(c, { j: 0, k: 1, w: 1 });
    for (let j = 1; j < row.length; j++) for (const t of row[j]) if (t.coef !== 0) add(t.at, { j, k: t.k, w: t.coef / Math.pow(t.at, t.k) });
    const rowUses: Use[] = [];
    for (const g of groups) {
      const terms = g.terms.filter((t) => t.w !== 0).sort((a, b) => a.j - b.j || a.k - b.k);
      if (terms.length === 0) continue;
      const scale = terms[0].w;
      const normal = terms.map((t) => ({ j: t.j, k: t.k, w: t.w / scale }));
      let job = share ? jobs.findIndex((x) => x.terms.length === normal.length && x.terms.every((t, q) => t.j === normal[q].j && t.k === normal[q].k && same(t.w, normal[q].w))) : -1;
      if (job < 0) { jobs.push({ terms: normal, ats: [], row: r }); job = jobs.length - 1; }
      const ats = jobs[job].ats;
      let slot = ats.findIndex((a) => same(a, g.at));
      if (slot < 0) { ats.push(g.at); slot = ats.length - 1; }
      rowUses.push({ job, slot, scale });
    }
    uses[r] = rowUses;
  }
  return { jobs, uses };
}

/**
 * The engine: one stepper for any table, linear part and φ-action. All work arrays are allocated here.
 * `share` = false evaluates every row's groups on their own (the previous engine; for the tests).
 */
export function exponentialRk(table: ExpRkTable, problem: Pick<Problem, "n" | "tendency">, lin: Pick<LinearPart, "apply" | "linearize">, phi: PhiAction, share = true): (x: Float64Array, t: number, h: number) => void {
  checkExpTable(table);
  const n = problem.n;
  const s = table.b.length;
  const maxPhi = tableMaxPhi(table);
  const plan = phiPlan(table, share);
  const F0 = new Float64Array(n), Fi = new Float64Array(n), U = new Float64Array(n), diff = new Float64Array(n), Ad = new Float64Array(n);
  const D = Array.from({ length: s }, (_, j) => (j === 0 ? F0 : new Float64Array(n)));
  const v = Array.from({ length: maxPhi + 1 }, () => new Float64Array(n));
  const results = plan.jobs.map((job) => job.ats.map(() => new Float64Array(n)));
  const taus = plan.jobs.map((job) => job.ats.map(() => 0));
  const jobsOfRow = Array.from({ length: s + 1 }, (_, r) => plan.jobs.flatMap((job, q) => (job.row === r ? [q] : [])));

  /** The φ-actions first needed by row r, then target += Σ scale · result over the row's uses. */
  function addRow(target: Float64Array, r: number, h: number): void {
    for (const q of jobsOfRow[r]) {
      const job = plan.jobs[q];
      for (let k = 0; k <= maxPhi; k++) v[k].fill(0);
      for (const t of job.terms) {
        const f = t.w * Math.pow(h, 1 - t.k), dj = D[t.j], vk = v[t.k];
        for (let i = 0; i < n; i++) vk[i] += f * dj[i];
      }
      const tq = taus[q];
      for (let i = 0; i < tq.length; i++) tq[i] = job.ats[i] * h;
      if (tq.length === 1) phi.apply(results[q][0], tq[0], v);
      else applyAtTimes(phi, results[q], tq, v);
    }
    for (const u of plan.uses[r]) {
      const y = results[u.job][u.slot], c = u.scale;
      for (let i = 0; i < n; i++) target[i] += c * y[i];
    }
  }

  return (x, t, h) => {
    lin.linearize(x, t);
    problem.tendency(F0, x, t);
    for (let i = 1; i < s; i++) {
      U.set(x);
      addRow(U, i, h);
      problem.tendency(Fi, U, t + table.c[i] * h);
      for (let q = 0; q < n; q++) diff[q] = U[q] - x[q];
      lin.apply(Ad, diff);
      const Di = D[i];
      for (let q = 0; q < n; q++) Di[q] = Fi[q] - F0[q] - Ad[q];
    }
    addRow(x, s, h);
  };
}

const ROSENBROCK_LINEAR = "jacobian";
/** Backends whose φ-actions need a skew operator with a purely imaginary spectrum. */
const SKEW_ONLY_BACKENDS = ["chebyshev", "rational", "rational-damped"];
const FILTER_BACKENDS = ["chebyshev", "rational-damped"];
/** Backends whose filter needs an explicit cut-off frequency (the offered filter orders alone do not do). */
const CUTOFF_BACKENDS = ["rational-damped"];
/**
 * Why a φ filter (and so rational-damped) needs linear rest or jacobian: the φ-functions of a modes:N part are
 * v/k! + τ Π̃ L P φ_{k+1}(τL̂) R v (exact layer mass); a filter inside the modal φ leaves the v/k! part unfiltered,
 * so the waves it removes are stepped by explicit Euler — measured to blow up within a few steps.
 */
export const MODES_FILTER_REASON = "the filter works with linear rest (or jacobian) only: with modes:N the waves it removes would be stepped by explicit Euler";
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
      conflicts: [
        { key: "filter", values: [8, 16], reason: MODES_FILTER_REASON },
        { key: "backend", values: CUTOFF_BACKENDS, reason: MODES_FILTER_REASON },
      ],
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
