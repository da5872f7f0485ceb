/**
 * The stepper interface: everything a time stepper — built-in or a user's module — may see of the model.
 *
 * A stepper is a `StepperDefinition`: a name, a declared order, a declaration of its options, and `create`,
 * which receives a `Problem` and returns an object with `step(x, t, dt)`. The model side (solver/model/
 * problem.ts) builds the Problem once per model and caches what is expensive (rest operator, modal
 * restrictions, spectral bounds); the steppers in solver/time/ import nothing but this file, linalg/ and
 * errors.ts.
 *
 * The state is one Float64Array (see `StateLayout`): layer thicknesses first, then normal velocities.
 */
import type { PhiAction, PhiFilter } from "../linalg/types.js";

export type { PhiAction, PhiFilter, PhiStats } from "../linalg/types.js";

/** Where each quantity sits in a state vector. */
export interface StateLayout {
  /** Number of layers L, top (0) to bottom (L−1). */
  readonly nLayers: number;
  /** Number of cells (thickness points). */
  readonly nCells: number;
  /** Number of edges (normal-velocity points). */
  readonly nEdges: number;
  /** Offset of the thickness block (always 0): h_k at cell i is x[k·nCells + i] [m]. */
  readonly thicknessOffset: number;
  /** Offset of the velocity block L·nCells: u_k at edge e is x[uOffset + k·nEdges + e] [m/s]. */
  readonly uOffset: number;
  /** Total length L·(nCells + nEdges). */
  readonly n: number;
}

/** Work counted by the problem itself, cumulative since the problem was built. */
export interface ProblemCounters {
  /** Full tendency evaluations, plus fractional equivalents for the fast/slow split's kernels. */
  readonly tendencyEvaluations: number;
  /** Linear-operator applications (inside φ-actions, Jacobian products, barotropic sub-steps). */
  readonly matvecs: number;
  /** Global inner products (reductions over the whole state; the communication cost on many processors). */
  readonly innerProducts: number;
  /** φ-action calls (each `phi(...).apply`, however many φ_k it combines). */
  readonly phiActions: number;
}

/** Options of a φ-action. */
export interface PhiRequest {
  /** "krylov" (default), "taylor", "chebyshev", "substep", "rational" or "dense". */
  backend?: string;
  /** Relative tolerance of each action (default 1e-8). */
  tolerance?: number;
  /** Time sub-steps inside each action (0 or absent: automatic). */
  substeps?: number;
  /** Damping of the highest resolved frequencies (chebyshev backend only); a filter order or its full form. */
  filter?: number | { order: number; strength?: number; cutoff?: number } | PhiFilter;
  /** Highest φ index the caller will pass (default 4). */
  maxPhi?: number;
  /** Field prefix used in error messages (default "stepper"). */
  field?: string;
}

/**
 * A linear part A of the tendency, acting on full-state vectors (thickness perturbations, velocities):
 *   "rest"     the rest-state linear wave operator (skew in the linear-energy inner product), fixed;
 *   "modes:N"  that operator restricted to the N fastest vertical modes, fixed;
 *   "jacobian" the exact Jacobian of the full tendency at the state last passed to `linearize`.
 */
export interface LinearPart {
  readonly name: string;
  /** True when the spectrum lies on the imaginary axis (chebyshev and rational backends need it). */
  readonly skew: boolean;
  /** Upper bound of |λ| over the spectrum [1/s] (for "jacobian": an estimate at the last linearization). */
  readonly spectralBound: number;
  /** True when `linearize` changes the operator (the Jacobian). */
  readonly reformed: boolean;
  /** out = A x. */
  apply(out: Float64Array, x: Float64Array): void;
  /** Re-form A at state x and time t (the Jacobian); a no-op for the fixed parts. */
  linearize(x: Float64Array, t: number): void;
  /** A φ-action of this operator: `apply(out, tau, [v0, v1, …])` = Σ_k τ^k φ_k(τA) v_k. Allocates its work arrays once. */
  phi(options?: PhiRequest): PhiAction;
  /**
   * out = (I − γ A)⁻¹ b, when the part offers shifted solves (fixed parts); the factorization for each γ is
   * computed once and reused.
   */
  solve?(out: Float64Array, b: Float64Array, gamma: number): void;
}

/**
 * The fast/slow split used by barotropic sub-cycling. The fast system is the free surface η (cells) and the
 * depth-mean ("barotropic") velocity ū (edges), with the column thickness Ĥ frozen at a centre state:
 *   dη/dt = −D(Ĥ ū)                      (`surfaceTendency`)
 *   dū/dt = −g G η + C(ū) + S̄            (`pressure`, `coriolis`, slow forcing S̄ from `splitTendency`)
 * The slow remainder of each layer is carried by the baroclinic velocity u'_k = u_k − ū. `reconcile` turns
 * the sub-cycle's averaged transport back into layer thicknesses in flux form (exact layer volume) and
 * layer velocities. Vectors: cells (nCells), edges (nEdges), layer-edges (L·nEdges, layer-major).
 */
export interface FastSlowSplit {
  readonly nLayers: number;
  readonly nCells: number;
  readonly nEdges: number;
  /** Largest barotropic gravity-wave frequency, of the deepest column [1/s]. */
  readonly maxFrequency: number;
  /** Largest first-baroclinic gravity-wave frequency [1/s] (0 with one layer). */
  readonly baroclinicFrequency: number;
  newCellVector(): Float64Array;
  newEdgeVector(): Float64Array;
  newLayerEdgeVector(): Float64Array;
  /** Free surface η = b + Σ_k h_k and thickness-weighted mean velocity ū = Σ ĥ_k u_k / Ĥ of state x. */
  barotropic(eta: Float64Array, ubar: Float64Array, x: Float64Array): void;
  /** Baroclinic velocities u'_k = u_k − ū of state x (ū from `barotropic` of the same x). */
  baroclinic(out: Float64Array, x: Float64Array, ubar: Float64Array): void;
  /** Freeze the column thickness Ĥ (and the rest PV f/Ĥ of the Coriolis term) at state x for the fast operators. */
  freeze(x: Float64Array): void;
  /** out = −D(Ĥ ū) (cells). */
  surfaceTendency(out: Float64Array, ubar: Float64Array): void;
  /** out = −g G η (edges; zero on coastline edges). */
  pressure(out: Float64Array, eta: Float64Array): void;
  /** out = C(ū): the energy-neutral Coriolis term of the barotropic transport (edges). */
  coriolis(out: Float64Array, ubar: Float64Array): void;
  /**
   * Split a full tendency T = F(x) evaluated at the frozen state x into the slow forcing of the barotropic
   * velocity S̄ = T̄ + Θ − (−g G η + C(ū)) (edges) and the baroclinic velocity tendency T'_k = T_k − T̄ − Θ
   * (layer-edges), so that ∂t(ū + u'_k) = T_k exactly (T̄: thickness-weighted mean, Θ: change of the weights).
   */
  splitTendency(slow: Float64Array, baroclinic: Float64Array, x: Float64Array, T: Float64Array): void;
  /**
   * Assemble the new state into `out` from the start state xn and the long step dt:
   *   layer transports F_k = ĥ_k (v'_k + v̄) with the frozen ĥ, corrected to sum to Ĥ v̄; h_k = h^n_k − dt D F_k;
   *   u_k = u'_k − (thickness-weighted mean of u' with the new thicknesses) + ū.
   * v' (layer-edges): baroclinic velocity carrying the transport; v̄ (edges): averaged barotropic transport
   * velocity; uPrime (layer-edges): new baroclinic velocities; ubar (edges): new barotropic velocity.
   */
  reconcile(out: Float64Array, xn: Float64Array, vPrime: Float64Array, vbar: Float64Array, uPrime: Float64Array, ubar: Float64Array, dt: number): void;
}

/** What a stepper receives: the model, seen only through this. */
export interface Problem {
  /** State length. */
  readonly n: number;
  readonly layout: StateLayout;
  /** A new zeroed state-length vector (allocate in `create`, never in `step`). */
  newVector(): Float64Array;
  /** out = F(x, t), the full tendency. Counted in `counters`. */
  tendency(out: Float64Array, x: Float64Array, t: number): void;
  /** A linear part: "rest", "modes:N" (1 ≤ N ≤ L) or "jacobian". Fixed parts are shared and cached. */
  linear(name: string, field?: string): LinearPart;
  /** The barotropic/baroclinic split for sub-cycling. */
  readonly fastSlow: FastSlowSplit;
  /** Work done so far, counted by the problem. */
  readonly counters: ProblemCounters;
}

/** One selectable value of an option, for pickers. */
export interface OptionChoice {
  readonly value: string | number;
  readonly label?: string;
  readonly help?: string;
  /** This choice does not work while option `key` has one of `values`. */
  readonly conflicts?: readonly { readonly key: string; readonly values: readonly (string | number | null)[]; readonly reason: string }[];
}

/** What the option declaration may depend on. */
export interface OptionContext {
  readonly nLayers: number;
}

/**
 * The one declaration of an option: validation (errors name `stepper.<key>`), CLI flags (`--<key>` or
 * `--option key=value`) and the sandbox's pickers are all driven by it.
 */
export interface OptionSpec {
  /** number: real; integer: whole number; choice: one of `choices`; string: free text; json: a structured value. */
  readonly type: "number" | "integer" | "choice" | "string" | "boolean" | "json";
  /** One line of help. */
  readonly help: string;
  /** A short plain-words label for pickers (default: the key). */
  readonly label?: string;
  /** Unit of a number, e.g. "s" or "1/s". */
  readonly unit?: string;
  /** Value used when the key is left out; undefined: nothing fixed (the stepper decides). */
  readonly default?: unknown;
  /** Bounds of number and integer options; `max` is also the declared bound on work (sub-steps, degrees). */
  readonly min?: number;
  readonly max?: number;
  /** True when the value must not reach min/max. */
  readonly exclusive?: boolean;
  /** The values a choice option takes (may depend on the number of layers). */
  readonly choices?: readonly (string | number | OptionChoice)[] | ((ctx: OptionContext) => readonly (string | number | OptionChoice)[]);
  /** Values that mean the same as leaving the key out (e.g. 0 sub-steps = automatic). */
  readonly sameAsOmitted?: readonly (string | number)[];
  /** Extra check or conversion after the type check; throw a SolverError naming `field` to refuse. */
  readonly parse?: (value: unknown, field: string, ctx: OptionContext) => unknown;
}

export type OptionDeclarations = Readonly<Record<string, OptionSpec>>;

/** What `create` gets besides the problem. */
export interface CreateContext {
  /** Field prefix for messages, e.g. "stepper". */
  readonly field: string;
  /** The step the run will use, when known [s] (lets a stepper refuse impossible settings early). */
  readonly dt?: number;
}

/** A stepper ready to run. */
export interface StepperInstance {
  /** Advance x in place from t to t + dt. Allocates nothing. */
  step(x: Float64Array, t: number, dt: number): void;
  /** A label with the options, e.g. "etdrk4 (linear=modes:1, backend=krylov)" (default: the name). */
  readonly label?: string;
  /** The order this configuration really has, when it differs from the declared order. */
  readonly order?: number;
  /** A note a user must see (e.g. "order reduced with a fixed linear part"). */
  readonly note?: string;
  /**
   * Steppers that carry values from one step to the next (multistep methods, filters) return them here so
   * that a restart continues bit for bit, and take them back in `loadState`.
   */
  saveState?(): Float64Array;
  loadState?(data: Float64Array): void;
}

/** A stepper: the same shape for built-ins and user modules. */
export interface StepperDefinition {
  /** Lower-case letters, digits and hyphens. */
  readonly name: string;
  /** Declared order of accuracy. */
  readonly order: number;
  /** One line: what it is. */
  readonly description: string;
  /** Declared options (key → declaration). */
  readonly options?: OptionDeclarations;
  /** Called once per run: allocate every work array here. `options` are validated, defaults filled in. */
  create(problem: Problem, options: Record<string, unknown>, context: CreateContext): StepperInstance;
  /** Built-ins only: family for grouping in pickers. */
  readonly family?: string;
  /** Linear stability bound on the imaginary axis, |ω Δt| ≤ bound, when the method has one. */
  readonly imaginaryAxisBound?: number;
  /** For barotropic sub-cycling methods: the bound |ω1 Δt| on the first baroclinic wave that limits the long step. */
  readonly baroclinicAxisBound?: number;
}
