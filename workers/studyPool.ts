/**
 * A pool of study workers, one per core (navigator.hardwareConcurrency), for the sandbox's studies. The work
 * items of a study are independent (a stability search per stepper; a sweep run per stepper and Δt after one
 * shared reference run), so every idle worker takes the next item, most expensive first. Progress is the share
 * of the work done, weighted by each item's steps; a stop ends every worker at once (a worker inside a time step
 * cannot read messages) and keeps what had finished. Fresh workers are started for the next study.
 */
import { proxy, wrap, type Remote } from "comlink";
import type { StudyApi } from "./study.worker.js";
import type { WorkerFailure } from "./protocol.js";
import type {
  ReferenceSummary, StabilityRequest, StabilityResult, SweepPlan, SweepRequest, SweepResult, SweepRow,
} from "./studyWork.js";

import type { StatisticFields, StatisticsPlan, StatisticsRequest, StatisticsResult, StatisticsRow } from "./statisticsWork.js";

export type { StabilityRequest, StabilityResult, SweepPlan, SweepRequest, SweepResult, SweepRow, ReferenceSummary };
export type { StatisticFields, StatisticsRequest, StatisticsResult, StatisticsRow };

/** A statistics study's result with the time-mean fields of the reference (member 0) and of every row, for maps. */
export interface StatisticsOutcome { result: StatisticsResult; reference: StatisticFields; rows: (StatisticFields | null)[] }
export interface PartialStatistics { plan: StatisticsPlan | null; rows: (StatisticsRow | undefined)[] }

export interface PoolProgress {
  /** Share of the work done, 0…1. */
  fraction: number;
  /** Work items finished and planned (a sweep's reference run counts as one). */
  done: number;
  total: number;
  /** Wall seconds since the start, and the estimate of what is left (NaN until there is a basis). */
  elapsed: number;
  remaining: number;
  /** What each busy worker runs now. */
  running: string[];
  workers: number;
}

export type StudyOutcome<R, P> =
  | { status: "completed"; result: R; wallSeconds: number; workers: number }
  | { status: "cancelled"; partial: P; done: number; total: number; wallSeconds: number; workers: number };

export interface PartialSweep { plan: SweepPlan | null; reference: ReferenceSummary | null; rows: (SweepRow | undefined)[] }
export type PartialStability = (StabilityResult | undefined)[];

const CANCELLED: WorkerFailure = { name: "WorkerError", code: "cancelled", message: "study cancelled" };
export const isCancelled = (e: unknown) => !!e && typeof e === "object" && (e as WorkerFailure).code === "cancelled";

/** A worker, and the user modules it has loaded (key → code). */
interface Slot { worker: Worker; remote: Remote<StudyApi>; died: Promise<never>; modules: Map<string, string> }

export function poolSize(): number {
  const n = typeof navigator !== "undefined" ? navigator.hardwareConcurrency : 1;
  return Math.max(1, Math.min(16, Number.isFinite(n) && n > 0 ? Math.floor(n) : 1));
}

export class StudyPool {
  private slots: Slot[] = [];
  private stop: (() => void) | null = null;
  private stopped: Promise<never> = new Promise<never>(() => undefined);
  busy = false;

  constructor(readonly size = poolSize()) {}

  private ensure(n: number): Slot[] {
    while (this.slots.length < n) {
      const worker = new Worker(new URL("./study.worker.ts", import.meta.url), { type: "module", name: `stepwell-study-${this.slots.length + 1}` });
      const died = new Promise<never>((_, reject) => {
        worker.addEventListener("error", (ev) => {
          ev.preventDefault();
          reject({ name: "WorkerError", code: "worker-died", message: `a study worker stopped unexpectedly (${ev.message || "worker error"})` } satisfies WorkerFailure);
        }, { once: true });
      });
      died.catch(() => undefined);
      this.slots.push({ worker, remote: wrap<StudyApi>(worker), died, modules: new Map() });
    }
    return this.slots.slice(0, n);
  }

  private modules: { key: string; code: string }[] = [];
  private origins: string[] = [];

  /**
   * The user modules (the code panel's, as JavaScript) that the steppers of the next study may name by key; every
   * worker imports them before its first item. Nothing is imported until a study starts.
   */
  setModules(modules: { key: string; code: string }[]): void {
    this.modules = modules;
  }

  /** The Blob URLs the workers imported user code from (fault messages name places in them). */
  moduleOrigins(): readonly string[] {
    return this.origins;
  }

  /** `n` workers, each with the current user modules loaded. */
  private async ready(n: number): Promise<Slot[]> {
    const slots = this.ensure(n);
    await Promise.all(slots.map(async (slot) => {
      for (const m of this.modules) {
        if (slot.modules.get(m.key) === m.code) continue;
        this.origins.push(await this.call(slot, (r) => r.loadModule(m.key, m.code)));
        slot.modules.set(m.key, m.code);
      }
    }));
    return slots;
  }

  /** The steppers of a study from the method-list syntax, parsed by the solver's own parser (errors name the field). */
  async parseSteppers(text: string): Promise<StabilityRequest["steppers"]> {
    const slot = this.ensure(1)[0];
    return slot.remote.parseSteppers(text);
  }

  /** Stop the study in progress: every worker ends now; the study resolves as cancelled with what finished. */
  cancel(): void {
    this.stop?.();
  }

  dispose(): void {
    this.cancel();
    for (const s of this.slots) s.worker.terminate();
    this.slots = [];
  }

  private begin(): void {
    if (this.busy) throw { name: "WorkerError", code: "busy", message: "a study is already running" } satisfies WorkerFailure;
    this.busy = true;
    this.stopped = new Promise<never>((_, reject) => {
      this.stop = () => {
        for (const s of this.slots) s.worker.terminate();
        this.slots = [];
        reject(CANCELLED);
      };
    });
    this.stopped.catch(() => undefined);
  }

  private end(): void {
    this.busy = false;
    this.stop = null;
  }

  /** Race a call against a stop and against the worker's death. */
  private call<T>(slot: Slot, f: (r: Remote<StudyApi>) => Promise<T>): Promise<T> {
    return Promise.race([f(slot.remote), this.stopped, slot.died]);
  }

  /**
   * Run items on `n` workers, each idle worker taking the next one in `order`; `job` gets a progress callback for
   * the item's own fraction. Results land at their item index.
   */
  private async runItems<T>(slots: Slot[], order: number[], results: (T | undefined)[], job: (s: Slot, k: number, onItem: (f: number, what: string) => void) => Promise<T>,
    onItem: (k: number, f: number, what: string) => void, onDone: (k: number) => void): Promise<void> {
    let next = 0;
    const loop = async (slot: Slot) => {
      while (next < order.length) {
        const k = order[next++];
        results[k] = await this.call(slot, () => job(slot, k, (f, what) => onItem(k, f, what)));
        onDone(k);
      }
    };
    await Promise.all(slots.map(loop));
  }

  /** A progress tracker over weighted items. */
  private tracker(weights: number[], onProgress: (p: PoolProgress) => void, workers: number) {
    const t0 = performance.now();
    const total = weights.reduce((a, b) => a + b, 0) || 1;
    const within = new Map<number, { f: number; what: string }>();
    let doneWeight = 0;
    let done = 0;
    let last = 0;
    const emit = (force: boolean) => {
      const now = performance.now();
      if (!force && now - last < 100) return;
      last = now;
      let w = doneWeight;
      for (const [k, v] of within) w += weights[k] * v.f;
      const fraction = Math.min(1, w / total);
      const elapsed = (now - t0) / 1000;
      const remaining = fraction > 0.01 ? (elapsed * (1 - fraction)) / fraction : NaN;
      onProgress({ fraction, done, total: weights.length, elapsed, remaining, running: [...within.values()].map((v) => v.what), workers });
    };
    return {
      item: (k: number, f: number, what: string) => { within.set(k, { f: Math.min(1, Math.max(0, f)), what }); emit(false); },
      done: (k: number) => { within.delete(k); doneWeight += weights[k]; done++; emit(true); },
      start: () => emit(true),
      seconds: () => (performance.now() - t0) / 1000,
    };
  }

  /** Stability searches, one work item per stepper. */
  async stability(req: StabilityRequest, onProgress: (p: PoolProgress) => void): Promise<StudyOutcome<StabilityResult[], PartialStability>> {
    this.begin();
    const results: PartialStability = new Array(req.steppers.length).fill(undefined);
    const n = Math.min(this.size, Math.max(1, req.steppers.length));
    const track = this.tracker(req.steppers.map(() => 1), onProgress, n);
    try {
      const slots = await this.ready(n);
      await this.call(slots[0], (r) => r.planStability(req));
      track.start();
      await this.runItems(slots, req.steppers.map((_, k) => k), results,
        (s, k, onItem) => s.remote.stabilityItem(req, k, proxy(onItem)), track.item, track.done);
      return { status: "completed", result: results as StabilityResult[], wallSeconds: track.seconds(), workers: n };
    } catch (e) {
      if (isCancelled(e)) {
        const done = results.filter((r) => r !== undefined).length;
        return { status: "cancelled", partial: results, done, total: results.length, wallSeconds: track.seconds(), workers: n };
      }
      this.dispose();
      throw e;
    } finally {
      this.end();
    }
  }

  /** Statistics: the reference ensemble members in parallel, then one item per stepper and Δt, then the CLI's finish. */
  async statistics(req: StatisticsRequest, onProgress: (p: PoolProgress) => void): Promise<StudyOutcome<StatisticsOutcome, PartialStatistics>> {
    this.begin();
    const partial: PartialStatistics = { plan: null, rows: [] };
    let n = 1;
    const t0 = performance.now();
    try {
      const first = (await this.ready(1))[0];
      const plan = await this.call(first, (r) => r.planStatistics(req));
      partial.plan = plan;
      const M = plan.ensemble.members;
      partial.rows = new Array(plan.nItems).fill(undefined);
      const fields: (StatisticFields | null)[] = new Array(plan.nItems).fill(null);
      n = Math.min(this.size, Math.max(M, plan.nItems));
      const slots = await this.ready(n);
      // one weight list: members 0…M−1, then rows M…M+nItems−1 (each weighted by its steps)
      const weights = [...Array.from({ length: M }, () => plan.reference.steps), ...Array.from({ length: plan.nItems }, (_, k) => plan.dts[k % plan.dts.length].steps)];
      const track = this.tracker(weights, onProgress, n);
      track.start();
      const records: Awaited<ReturnType<Remote<StudyApi>["statisticsMember"]>>[] = new Array(M);
      await this.runItems(slots.slice(0, Math.min(n, M)), Array.from({ length: M }, (_, m) => m), records,
        (s, m, onItem) => s.remote.statisticsMember(req, plan, m, proxy(onItem)), track.item, track.done);
      await Promise.all(slots.map((s) => this.call(s, (r) => r.adoptMembers(records))));
      const ref = await this.call(first, (r) => r.statisticsReference(req, plan));
      const items: { row: StatisticsRow; fields: StatisticFields | null }[] = new Array(plan.nItems);
      const order = Array.from({ length: plan.nItems }, (_, k) => k).sort((a, b) => weights[M + b] - weights[M + a] || a - b);
      await this.runItems(slots, order, items, (s, k, onItem) => s.remote.statisticsItem(req, plan, k, proxy(onItem)),
        (k, f, what) => track.item(M + k, f, what), (k) => { partial.rows[k] = items[k].row; fields[k] = items[k].fields; track.done(M + k); });
      const result = await this.call(first, (r) => r.finishStatistics(plan, ref.summary, ref.floor, partial.rows as StatisticsRow[]));
      return { status: "completed", result: { result, reference: ref.fields, rows: fields }, wallSeconds: (performance.now() - t0) / 1000, workers: n };
    } catch (e) {
      if (isCancelled(e)) {
        const done = partial.rows.filter((r) => r !== undefined).length;
        return { status: "cancelled", partial, done, total: partial.rows.length, wallSeconds: (performance.now() - t0) / 1000, workers: n };
      }
      this.dispose();
      throw e;
    } finally {
      this.end();
    }
  }

  /** A convergence sweep: the reference run, then one work item per stepper and Δt, then the CLI's fits. */
  async sweep(req: SweepRequest, onProgress: (p: PoolProgress) => void): Promise<StudyOutcome<SweepResult, PartialSweep>> {
    this.begin();
    const partial: PartialSweep = { plan: null, reference: null, rows: [] };
    let n = 1;
    const t0 = performance.now();
    try {
      const first = (await this.ready(1))[0];
      const plan = await this.call(first, (r) => r.planSweep(req));
      partial.plan = plan;
      partial.rows = new Array(plan.nItems).fill(undefined);
      n = Math.min(this.size, plan.nItems);
      const slots = await this.ready(n);
      // weights: steps of each run; the reference (fine run + its check at twice the Δt) is item −1, shown first
      const weights = [...Array.from({ length: plan.nItems }, (_, k) => plan.dts[k % plan.dts.length].steps), 1.5 * plan.reference.steps];
      const REF = plan.nItems;
      const track = this.tracker(weights, onProgress, n);
      track.start();
      const { record, summary } = await this.call(first, (r) => r.sweepReference(req, plan, proxy((f: number, what: string) => track.item(REF, f, what))));
      track.done(REF);
      partial.reference = summary;
      await Promise.all(slots.slice(1).map((s) => this.call(s, (r) => r.adoptReference(record))));
      const order = Array.from({ length: plan.nItems }, (_, k) => k).sort((a, b) => weights[b] - weights[a] || a - b);
      await this.runItems(slots, order, partial.rows, (s, k, onItem) => s.remote.sweepItem(req, plan, k, proxy(onItem)), track.item, track.done);
      const result = await this.call(first, (r) => r.finishSweep(plan, summary, partial.rows as SweepRow[]));
      return { status: "completed", result, wallSeconds: (performance.now() - t0) / 1000, workers: n };
    } catch (e) {
      if (isCancelled(e)) {
        const done = partial.rows.filter((r) => r !== undefined).length;
        return { status: "cancelled", partial, done, total: partial.rows.length, wallSeconds: (performance.now() - t0) / 1000, workers: n };
      }
      this.dispose();
      throw e;
    } finally {
      this.end();
    }
  }
}
