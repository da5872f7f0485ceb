/**
 * The statistics study as the sandbox's pool runs it — ensemble members in parallel, then one item per stepper and
 * Δt — assembled in item order (items run out of order) equals `runStatistics` on the same inputs, wall times aside.
 */
import { describe, expect, it } from "vitest";
import { buildScenario } from "../solver/scenario/build";
import { parseScenario } from "../solver/scenario/schema";
import { MemoryReferenceCache } from "../solver/studies/reference";
import { runStatistics } from "../solver/studies/statistics";
import { adoptMembers, finishStatisticsStudy, planStatisticsStudy, statisticsItem, statisticsMember, statisticsReference, type StatisticsRow } from "../workers/statisticsWork";

const scenario = {
  name: "tiny-stats", mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 60 }, duration: 3600,
};
const withoutWall = (v: unknown) => JSON.parse(JSON.stringify(v, (k, x) => (k === "wallSeconds" ? undefined : x)));

describe("sandbox statistics work items", () => {
  it("members and rows computed apart and out of order give runStatistics' result", () => {
    const definition = { steppers: [{ method: "rk4" }, { method: "ssprk3" }], dts: [60, 120], spinUp: 1200, window: 2400, sampleEvery: 600, referenceDt: 30, ensemble: 2 };
    const req = { scenario, definition };
    const plan = planStatisticsStudy(req);
    const members = [statisticsMember(req, plan, 1), statisticsMember(req, plan, 0)];
    adoptMembers(members);
    const ref = statisticsReference(req, plan);
    const rows: StatisticsRow[] = [];
    for (const k of [3, 1, 0, 2]) {
      const it = statisticsItem(req, plan, k);
      rows[k] = it.row;
      expect(it.fields?.meanSurface.length ?? null).toBe(it.row.status === "completed" ? 144 : null);
    }
    const mine = finishStatisticsStudy(plan, ref.summary, ref.floor, rows);
    const direct = runStatistics(buildScenario(parseScenario(scenario)), { ...definition, field: "steppers" }, { cache: new MemoryReferenceCache() });
    expect(withoutWall(mine)).toEqual(withoutWall(direct));
    expect(mine.noiseFloor.meanSurface).not.toBeNull();
  });
});
