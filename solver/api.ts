/**
 * Stepwell's public stepper interface — the only thing a stepper module needs.
 *
 * A stepper module is a `.js`, `.mjs` or `.ts` file whose default export is a {@link StepperDefinition}:
 *
 * ```ts
 * import type { StepperDefinition } from "stepwell/solver/api";   // types only: erased when the module runs
 *
 * const midpoint: StepperDefinition = {
 *   name: "my-midpoint", order: 2, description: "explicit midpoint rule",
 *   create(problem) {
 *     const k = problem.newVector(), y = problem.newVector();      // allocate once, here
 *     return {
 *       step(x, t, dt) {                                            // advance x in place; allocate nothing
 *         problem.tendency(k, x, t);
 *         for (let i = 0; i < x.length; i++) y[i] = x[i] + 0.5 * dt * k[i];
 *         problem.tendency(k, y, t + 0.5 * dt);
 *         for (let i = 0; i < x.length; i++) x[i] += dt * k[i];
 *       },
 *     };
 *   },
 * };
 * export default midpoint;
 * ```
 *
 * Run it with `stepwell run SCENARIO --stepper-module FILE`, grade it with `stepwell assess SCENARIO
 * --stepper-module FILE`, or name it in a scenario or a `--steppers` file as `{ "module": "FILE", "dt": … }`.
 * The built-in steppers are written against exactly this interface (solver/time/).
 *
 * @packageDocumentation
 */
export type {
  /** Where each quantity sits in a state vector. */
  StateLayout,
  /** Work counted by the problem itself (tendency evaluations, matvecs, inner products). */
  ProblemCounters,
  /** Options of a φ-action (backend, tolerance, sub-steps, filter, highest φ index). */
  PhiRequest,
  /** A φ-action: `apply(out, tau, [v0, v1, …])` = Σ_k τ^k φ_k(τA) v_k. */
  PhiAction,
  /** Statistics of the last φ-action call. */
  PhiStats,
  /** A linear part of the tendency: "rest", "modes:N" or "jacobian". */
  LinearPart,
  /** The barotropic/baroclinic split for sub-cycling. */
  FastSlowSplit,
  /** What a stepper receives. */
  Problem,
  /** One selectable value of a choice option. */
  OptionChoice,
  /** What option declarations may depend on (the number of layers). */
  OptionContext,
  /** The declaration of one option. */
  OptionSpec,
  /** Key → option declaration. */
  OptionDeclarations,
  /** What `create` gets besides the problem and the options. */
  CreateContext,
  /** What `create` returns. */
  StepperInstance,
  /** A stepper: name, declared order, options and `create`. */
  StepperDefinition,
} from "./time/interface.js";
