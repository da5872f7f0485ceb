/**
 * A study worker: one of the pool that runs the sandbox's studies (see studyPool.ts). A thin comlink adapter
 * around studyWork.ts; progress inside an item goes back through a callback at most ten times a second, and
 * every failure leaves as a plain WorkerFailure (comlink would keep only the message of a thrown Error).
 */
import { expose, transfer } from "comlink";
import {
  adoptReference, finishSweepStudy, planStability, planSweepStudy, stabilityItem, summarizeReference, sweepItem, sweepReference,
  type ItemProgress, type ReferenceRecord, type ReferenceSummary, type StabilityRequest, type SweepPlan, type SweepRequest, type SweepRow,
} from "./studyWork.js";
import { parseSteppers } from "./studyWork.js";
import {
  adoptMembers, finishStatisticsStudy, planStatisticsStudy, statisticsItem, statisticsMember, statisticsReference,
  type StatisticsPlan, type StatisticsReferenceSummary, type StatisticsRequest, type StatisticsRow, type StatisticValues,
} from "./statisticsWork.js";
import { failure, guarded } from "./guarded.js";
import { importUserModule, moduleUrl } from "./userModule.js";


/** Forward progress at most every 100 ms (each call is a message to the page). */
function throttled(f?: ItemProgress): ItemProgress | undefined {
  if (!f) return undefined;
  let last = -Infinity;
  return (fraction, item) => {
    const now = performance.now();
    if (now - last < 100 && fraction < 1) return;
    last = now;
    void f(fraction, item);
  };
}

const api = {
  /** Load a user's module (the code panel's) under its key before a study that names it; returns the origin of fault places. */
  loadModule: async (key: string, code: string): Promise<string> => {
    const origin = moduleUrl(code);
    try {
      await importUserModule(key, origin);
      return origin;
    } catch (e) {
      throw failure(e);
    }
  },
  parseSteppers: guarded((text: string) => parseSteppers(text)),
  planStability: guarded((req: StabilityRequest) => planStability(req)),
  stabilityItem: guarded((req: StabilityRequest, k: number, onItem?: ItemProgress) => stabilityItem(req, k, throttled(onItem))),
  planSweep: guarded((req: SweepRequest) => planSweepStudy(req)),
  /** The reference run; its state is moved, not copied, to the page (which hands it to the other workers). */
  sweepReference: guarded((req: SweepRequest, plan: SweepPlan, onItem?: ItemProgress): { record: ReferenceRecord; summary: ReferenceSummary } => {
    const record = sweepReference(req, plan, throttled(onItem));
    const copy = { ...record, state: Float64Array.from(record.state) };
    return transfer({ record: copy, summary: summarizeReference(record) }, [copy.state.buffer]);
  }),
  adoptReference: guarded((record: ReferenceRecord) => { adoptReference(record); }),
  sweepItem: guarded((req: SweepRequest, plan: SweepPlan, k: number, onItem?: ItemProgress) => sweepItem(req, plan, k, throttled(onItem))),
  finishSweep: guarded((plan: SweepPlan, reference: ReferenceSummary, rows: SweepRow[]) => finishSweepStudy(plan, reference, rows)),
  // statistics: ensemble members, then one item per stepper and Δt (fields come back for the maps)
  planStatistics: guarded((req: StatisticsRequest) => planStatisticsStudy(req)),
  statisticsMember: guarded((req: StatisticsRequest, plan: StatisticsPlan, m: number, onItem?: ItemProgress) => statisticsMember(req, plan, m, throttled(onItem))),
  adoptMembers: guarded((records: ReferenceRecord[]) => { adoptMembers(records); }),
  statisticsReference: guarded((req: StatisticsRequest, plan: StatisticsPlan) => statisticsReference(req, plan)),
  statisticsItem: guarded((req: StatisticsRequest, plan: StatisticsPlan, k: number, onItem?: ItemProgress) => statisticsItem(req, plan, k, throttled(onItem))),
  finishStatistics: guarded((plan: StatisticsPlan, summary: StatisticsReferenceSummary, floor: { max: StatisticValues; rms: StatisticValues }, rows: StatisticsRow[]) =>
    finishStatisticsStudy(plan, summary, floor, rows)),
};

export type StudyApi = typeof api;
expose(api);
