/**
 * A minimal Problem for the IMEX tests, built straight from a ShallowWaterModel: the full tendency and the fixed
 * linear parts "rest" and "modes:N" with their shifted solves. Only what the IMEX engine uses is provided.
 */
import { SolverError } from "../solver/errors";
import { restLinearOperator, type RestLinearOperator } from "../solver/model/linear";
import { modalRestriction } from "../solver/model/restriction";
import type { ShallowWaterModel } from "../solver/model/shallowWater";
import type { LinearPart, Problem } from "../solver/time/interface";

export function testProblem(model: ShallowWaterModel): Problem & { rest: RestLinearOperator } {
  const rest = restLinearOperator(model);
  const parts = new Map<string, LinearPart>();
  const counters = { tendencyEvaluations: 0, matvecs: 0, innerProducts: 0 };
  const unsupported = () => { throw new Error("not part of the IMEX test problem"); };
  function linear(name: string, field = "stepper.linear"): LinearPart {
    let part = parts.get(name);
    if (part) return part;
    if (name === "rest") {
      part = {
        name, skew: true, spectralBound: rest.spectralBound, reformed: false,
        apply: (out, x) => { rest.apply(out, x); counters.matvecs++; },
        linearize() {}, phi: unsupported,
        solve: (out, b, gamma) => rest.solve(out, b, gamma),
      };
    } else {
      const m = /^modes:(\d+)$/.exec(name);
      if (!m) throw new SolverError("bad-input", `${field}: unknown linear part "${name}"`, field);
      const r = modalRestriction(model, Number(m[1]), rest);
      part = {
        name, skew: true, spectralBound: r.operator.spectralBound!, reformed: false,
        apply: (out, x) => { r.restricted.apply(out, x); counters.matvecs++; },
        linearize() {}, phi: unsupported,
        solve: (out, b, gamma) => r.solve(out, b, gamma),
      };
    }
    parts.set(name, part);
    return part;
  }
  const layout = { ...model.layout, thicknessOffset: 0 };
  return {
    n: model.n, layout, rest,
    newVector: () => new Float64Array(model.n),
    tendency(out, x, t) { model.tendency(out, x, t); counters.tendencyEvaluations++; },
    linear,
    get fastSlow(): never { return unsupported(); },
    counters,
  };
}
