/**
 * The statistics study as work items for the sandbox's worker pool: each reference ensemble member is one item
 * (run in parallel, then handed to every worker's reference cache), then each stepper and Δt is one item, then
 * the engine's own `finishStatistics`. Assembled in item order the result equals `runStatistics` (what the CLI
 * prints) for the same inputs; a test checks it. The time-mean fields of the reference and of every row come
 * back too, for the page's maps.
 */
import { SolverError } from "../solver/errors.js";
import { Run } from "../solver/driver/run.js";
import type { StepperSpec } from "../solver/scenario/schema.js";
import { StudyTracker } from "../solver/studies/common.js";
import { referenceCache, type ReferenceRecord } from "../solver/studies/reference.js";
import {
  finishStatistics, memberInitialState, memberKey, noiseFloor, packStatistics, planStatistics, referenceMembers, sampleWindow, StatisticsAccumulator,
  statisticsRows, summarizeStatisticsReference,
  type StatisticFields, type StatisticsDefinition, type StatisticsPlan, type StatisticsReferenceSummary, type StatisticsResult, type StatisticsRow, type StatisticValues, type WindowEnergy,
} from "../solver/studies/statistics.js";
import { builtScenario, type ItemProgress } from "./studyWork.js";

export type { StatisticFields, StatisticsDefinition, StatisticsPlan, StatisticsReferenceSummary, StatisticsResult, StatisticsRow, StatisticValues };

export interface StatisticsRequest {
  scenario: unknown;
  definition: StatisticsDefinition;
}

const clock = () => performance.now() / 1000;
const tracker = (onItem?: ItemProgress) => new StudyTracker({ clock, onProgress: onItem ? (p) => onItem(p.fraction, p.item) : undefined }, 1);

export function planStatisticsStudy(req: StatisticsRequest): StatisticsPlan {
  return planStatistics(builtScenario(req.scenario), { field: "steppers", ...req.definition });
}

/** Member m of the reference ensemble: spun up from its (perturbed) initial state and sampled, as `referenceMembers` runs it. */
export function statisticsMember(req: StatisticsRequest, plan: StatisticsPlan, m: number, onItem?: ItemProgress): ReferenceRecord {
  const built = builtScenario(req.scenario);
  const { nLayers: L, nCells: nc } = built.model.layout;
  const r = plan.reference;
  const initial = memberInitialState(built.initial, L * nc, m, plan.ensemble.perturbation, plan.ensemble.seed);
  const run = new Run({ ...built, initial }, { ...r.spec, dt: r.dt } as StepperSpec);
  run.reset();
  const what = `reference ${r.label}${plan.ensemble.members > 1 ? ` member ${m + 1}/${plan.ensemble.members}` : ""}`;
  const w = sampleWindow(run, r, new StatisticsAccumulator(built.model), plan.samples, tracker(onItem), what);
  if (w.status !== "completed") {
    const u = w.unstable!;
    throw new SolverError("bad-input", `--reference-dt: the ${what} (Δt = ${Number(r.dt.toPrecision(4))} s) became unstable at step ${u.step}: ${u.reason}; choose a smaller reference Δt`, "--reference-dt");
  }
  const record: ReferenceRecord = {
    key: memberKey(built, plan, m), solver: "", method: r.spec.method, label: r.label, spec: r.spec, dt: r.dt, steps: r.steps, duration: r.steps * r.dt,
    floor: { surface: 0, thickness: 0, velocity: 0 }, order: run.stepper.order, state: packStatistics(w.fields!, w.energy!),
  };
  referenceCache.set(record.key, record);
  return record;
}

/** Hand a worker the members others computed (each a reference record in the shared cache format). */
export function adoptMembers(records: readonly ReferenceRecord[]): void {
  for (const r of records) referenceCache.set(r.key, r);
}

/** The reference summary, the noise floor and member 0's fields, from the members in the cache. */
export function statisticsReference(req: StatisticsRequest, plan: StatisticsPlan): {
  summary: StatisticsReferenceSummary; floor: { max: StatisticValues; rms: StatisticValues }; fields: StatisticFields; energy: WindowEnergy;
} {
  const built = builtScenario(req.scenario);
  const members = referenceMembers(built, plan, referenceCache, tracker());
  return { summary: summarizeStatisticsReference(built, plan, members), floor: noiseFloor(built.model, members), fields: members[0].fields, energy: members[0].energy };
}

/** Item k: stepper ⌊k / nΔt⌋ at Δt k mod nΔt, with its time-mean fields (null if the run did not complete). */
export function statisticsItem(req: StatisticsRequest, plan: StatisticsPlan, k: number, onItem?: ItemProgress): { row: StatisticsRow; fields: StatisticFields | null } {
  const built = builtScenario(req.scenario);
  const members = referenceMembers(built, plan, referenceCache, new StudyTracker({}, 1)); // cache hits: adopted before
  const floor = noiseFloor(built.model, members);
  let fields: StatisticFields | null = null;
  const [row] = statisticsRows(built, plan, members[0], floor.max, [k], tracker(onItem), [], (_, f) => { fields = f; });
  return { row, fields };
}

export function finishStatisticsStudy(plan: StatisticsPlan, summary: StatisticsReferenceSummary, floor: { max: StatisticValues; rms: StatisticValues }, rows: StatisticsRow[]): StatisticsResult {
  return finishStatistics(plan, summary, floor, rows);
}
