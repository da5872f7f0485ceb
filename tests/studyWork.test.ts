/**
 * The sandbox's studies run as independent work items in a pool of workers. Assembled in item order, in any
 * order of completion, they must give exactly what the solver's own `runSweep` and `runStability` (what the
 * CLI prints) give for the same inputs; only wall times differ.
 */
import { describe, expect, it } from "vitest";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";
import { runStability } from "../solver/studies/stability";
import { runSweep } from "../solver/studies/sweep";
import { MemoryReferenceCache } from "../solver/studies/reference";
import {
  adoptReference, finishSweepStudy, parseSteppers, planStability, planSweepStudy, stabilityItem, summarizeReference, sweepItem, sweepReference,
  type SweepRow,
} from "../workers/studyWork";

/** A small doubly periodic two-layer ocean with a surface bump: 12 × 12 = 144 cells. */
const scenario = {
  name: "tiny-ring", mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 60 }, duration: 3600,
};

/** Everything but the wall-clock figures, which differ from run to run. */
function withoutWall(v: unknown): unknown {
  return JSON.parse(JSON.stringify(v, (k, x) => (k === "wallSeconds" ? undefined : x)));
}

describe("sandbox study work items", () => {
  it("a sweep assembled from items run out of order equals runSweep on the same inputs", () => {
    const definition = { steppers: parseSteppers("rk4,ssprk3"), dtFactors: [0.5, 0.25, 0.125], duration: 1800 };
    const req = { scenario, definition };
    const plan = planSweepStudy(req);
    expect(plan.nItems).toBe(6);
    const ref = sweepReference(req, plan);
    adoptReference(ref);
    const rows: SweepRow[] = [];
    for (const k of [5, 0, 3, 1, 4, 2]) rows[k] = sweepItem(req, plan, k);
    const mine = finishSweepStudy(plan, summarizeReference(ref), rows);
    const direct = runSweep(buildScenario(parseScenario(scenario)), { ...definition, field: "steppers" }, { cache: new MemoryReferenceCache() });
    expect(withoutWall(mine)).toEqual(withoutWall(direct));
    // the fits are there: RK4 is fourth order in time (Kutta 1901), SSPRK3 third (Shu and Osher 1988)
    expect(mine.orders.rk4.order).not.toBeNull();
  });

  it("a stability study assembled from items equals runStability, and bad input names the field", () => {
    const req = { scenario, steppers: parseSteppers("rk4,ssprk3"), options: { duration: 1200, tolerance: 0.05 } };
    expect(planStability(req).items).toBe(2);
    const mine = [stabilityItem(req, 1), stabilityItem(req, 0)].reverse();
    const direct = runStability(buildScenario(parseScenario(scenario)), req.steppers, req.options, { field: "steppers" });
    expect(withoutWall(mine)).toEqual(withoutWall(direct));
    expect(() => planStability({ ...req, steppers: parseSteppers("rk4,nosuch") })).toThrow(/steppers\[1\]/);
    expect(() => parseSteppers("rk4(linear")).toThrow(/steppers: unbalanced/);
  });
});
