/**
 * The solver's Web Worker: a thin comlink adapter around the run driver. It owns one Run, advances it in the
 * chunks the UI asks for, and moves map snapshots as transferable buffers. Every failure leaves as a plain
 * WorkerFailure object (comlink keeps only the message of a thrown Error, so the field would be lost).
 */
import { expose, transfer } from "comlink";
import { fieldWork, cellOutlines, computeField, FIELDS, type FieldWork } from "../solver/diagnostics/fields.js";
import { createRun, type Run } from "../solver/driver/run.js";
import { driftUndefinedReason, type EnergyBudgetSummary } from "../solver/diagnostics/energyBudget.js";
import { parseScenarioText, type StepperSpec } from "../solver/scenario/schema.js";
import { BUILTIN_SCENARIOS } from "../solver/scenario/builtins.js";
import { listMethods } from "../solver/time/registry.js";
import { optionChoices } from "../solver/time/optionChoices.js";
import type { ChunkReport, InitResult, MapView, MethodSummary, Snapshot, StepperInfo, WorkerFailure } from "./protocol.js";

let run: Run | undefined;
let work: FieldWork | undefined;

function failure(e: unknown): WorkerFailure {
  if (e && typeof e === "object" && (e as { name?: string }).name === "SolverError") {
    const s = e as { code: string; field?: string; message: string };
    return { name: "SolverError", code: s.code, field: s.field, message: s.message };
  }
  return { name: "WorkerError", code: "internal", message: e instanceof Error ? e.message : String(e) };
}

/** Run `f`, turning any exception into a rejected promise carrying a WorkerFailure. */
function guarded<A extends unknown[], R>(f: (...a: A) => R): (...a: A) => R {
  return (...a: A) => {
    try {
      return f(...a);
    } catch (e) {
      throw failure(e);
    }
  };
}

function current(): Run {
  if (!run) throw { name: "WorkerError", code: "no-run", message: "no scenario is loaded yet" } satisfies WorkerFailure;
  return run;
}

function snapshot(r: Run, view: MapView, recycled?: Float32Array): Snapshot {
  const n = r.mesh.nCells;
  const reuse = !!recycled && recycled.length === n;
  const values = reuse ? recycled : new Float32Array(n);
  const range = computeField(values, view.kind, view.layer, r.model, r.state, work!);
  return { values, kind: view.kind, layer: view.layer, min: range.min, max: range.max, step: r.steps, time: r.time, recycled: reuse };
}

function report(r: Run, view: MapView, chunkSteps: number, chunkMs: number, recycled?: Float32Array): ChunkReport {
  const budget = r.budget();
  const eb = r.energyBudget ? r.energyBudget.summary(r.state) : null;
  const st = r.stepper.stats;
  const u = r.unstable;
  return {
    step: r.steps, time: r.time, budget, courant: r.courant(budget),
    counters: { steps: st.steps, rhsEvaluations: st.rhsEvaluations, matvecs: st.matvecs, innerProducts: st.innerProducts },
    chunkSteps, chunkMs, budgetMs: 0,
    unstable: u ? { ...u, cell: u.field === "thickness" ? u.index : r.mesh.edgeCells[2 * u.index] } : null,
    snapshot: snapshot(r, view, recycled),
    energyBudget: eb,
    energyDrift: energyDrift(r, eb, budget.energy),
  };
}

/** (E − E0)/E0 since the start when that means something, else null with the reason. */
function energyDrift(r: Run, eb: EnergyBudgetSummary | null, energy: number): ChunkReport["energyDrift"] {
  const e0 = eb ? eb.initialEnergy : r.budget(r.built.initial).energy;
  const reason = driftUndefinedReason(r.model, e0);
  return reason ? { value: null, reason } : { value: (energy - e0) / e0 };
}

const moved = (rep: ChunkReport) => transfer(rep, [rep.snapshot.values.buffer]);

function stepperInfo(r: Run): StepperInfo {
  return { spec: { ...r.spec }, label: r.stepper.label, note: r.stepper.note };
}

/** The registered methods, with option pickers for a scenario of `nLayers` layers (default: the loaded one's). */
function methods(nLayers = run?.model.params.nLayers ?? 1): MethodSummary[] {
  return listMethods().map((m) => ({
    name: m.name, family: m.family ?? "user", order: m.order, description: m.description, options: Object.keys(m.options ?? {}),
    choices: optionChoices(m.name, nLayers), imaginaryAxisBound: m.imaginaryAxisBound, baroclinicAxisBound: m.baroclinicAxisBound,
  }));
}

function start(raw: unknown, stepper: StepperSpec | undefined, view: MapView): InitResult {
  const next = createRun(raw, stepper); // throws before the current run is touched
  run = next;
  const tracker = next.trackEnergyBudget();
  if (tracker) tracker.clock = () => performance.now() / 1000;
  work = fieldWork(next.model);
  const outlines = cellOutlines(next.mesh);
  const result: InitResult = {
    description: next.describe(), scenario: next.built.scenario, stepper: stepperInfo(next),
    methods: methods(next.model.params.nLayers), fields: [...FIELDS], outlines, report: report(next, view, 0, 0),
  };
  return transfer(result, [
    outlines.offset.buffer, outlines.vertexXY.buffer, outlines.cellX.buffer, outlines.cellY.buffer, outlines.coast.buffer,
    result.report.snapshot.values.buffer,
  ]);
}

const api = {
  /** Validate and build a scenario (a parsed object); the old run stays if this fails. */
  init: guarded((raw: unknown, stepper: StepperSpec | undefined, view: MapView) => start(raw, stepper, view)),
  /** Same from the text of a scenario file, so JSON syntax errors get the solver's wording too. */
  initFromText: guarded((text: string, view: MapView) => start(parseScenarioText(text, "scenario file"), undefined, view)),
  /** Advance up to n steps (stops early on a blow-up); refills `recycled` with the map field if it fits. */
  advance: guarded((n: number, view: MapView, recycled?: Float32Array): ChunkReport => {
    const r = current();
    const t0 = performance.now();
    const s0 = r.steps;
    const b0 = r.energyBudget?.seconds ?? 0;
    r.advance(Math.max(0, Math.floor(n)));
    const rep = report(r, view, r.steps - s0, performance.now() - t0, recycled);
    rep.budgetMs = 1000 * ((r.energyBudget?.seconds ?? 0) - b0);
    return moved(rep);
  }),
  /** The map field of the current state, e.g. after the user picks another field while paused. */
  snapshot: guarded((view: MapView, recycled?: Float32Array): Snapshot => {
    const s = snapshot(current(), view, recycled);
    return transfer(s, [s.values.buffer]);
  }),
  /** Swap the stepper or Δt; the state and time carry on from where they are. */
  setStepper: guarded((spec: StepperSpec): StepperInfo & { rk4DtLimit: number; courant: ChunkReport["courant"] } => {
    const r = current();
    r.setStepper(spec);
    r.unstable = null; // after a blow-up the state is the last good one: carry on from there with the new stepper
    return { ...stepperInfo(r), rk4DtLimit: r.rk4DtLimit(), courant: r.courant() };
  }),
  reset: guarded((view: MapView): ChunkReport => {
    const r = current();
    r.reset();
    return moved(report(r, view, 0, 0));
  }),
  methods: guarded((nLayers?: number) => methods(nLayers)),
  /** The built-in scenarios as plain scenario-file objects. */
  builtins: guarded((): { name: string; description: string; scenario: unknown }[] =>
    BUILTIN_SCENARIOS.map((b) => ({ name: b.name, description: b.description, scenario: structuredClone(b) as unknown }))),
  /** Development builds only: crash the worker outside any call, so the UI's restart path can be tested. */
  crashForTesting: () => {
    if (!import.meta.env.DEV) return false;
    setTimeout(() => { throw new Error("deliberate worker crash (test hook)"); }, 0);
    return true;
  },
};

export type SimulationApi = typeof api;
expose(api);
