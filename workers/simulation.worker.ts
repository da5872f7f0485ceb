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
import { describeOptions, optionChoices } from "../solver/time/optionChoices.js";
import { importUserModule, moduleUrl } from "./userModule.js";
import type { Checkpoint, ChunkReport, InitResult, LoadedModule, MapView, MethodSummary, Snapshot, StepperInfo, StepperSpec as Spec, WorkerFailure } from "./protocol.js";
import { probeCell } from "./probe.js";
import { netcdfSnapshot } from "./netcdfSnapshot.js";
import { startFromFile, type StartStateInfo } from "./startState.js";
import { failure, guarded } from "./guarded.js";

let run: Run | undefined;
let work: FieldWork | undefined;


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

const moved = (rep: ChunkReport) => {
  const c = rep.checkpoint;
  const buffers: ArrayBuffer[] = [rep.snapshot.values.buffer as ArrayBuffer];
  if (c) { buffers.push(c.state.buffer as ArrayBuffer); if (c.stepperState) buffers.push(c.stepperState.buffer as ArrayBuffer); }
  return transfer(rep, buffers);
};

// ---- Time slices and checkpoints: the worker never holds a message longer than one slice plus one step ----
/** Longest a call computes before it answers, whatever it was asked for [ms] (one step is never cut short). */
const SLICE_MS = 50;
/** A checkpoint goes with a report at most this often while running [ms], and always after a change of stepper. */
const CHECKPOINT_MS = 1000;
let lastCheckpoint = -Infinity;

function takeCheckpoint(r: Run): Checkpoint {
  lastCheckpoint = performance.now();
  const saved = r.stepper.instance.saveState?.();
  return { state: Float64Array.from(r.state), time: r.time, step: r.steps, spec: { ...r.spec }, stepperState: saved ? Float64Array.from(saved) : undefined };
}

/** Steps while `more()` and the slice lasts; the report carries a checkpoint when one is due. */
function sliced(r: Run, view: MapView, more: () => boolean, recycled?: Float32Array): ChunkReport {
  const t0 = performance.now();
  const s0 = r.steps;
  const b0 = r.energyBudget?.seconds ?? 0;
  while (more() && r.advance(1) && performance.now() - t0 < SLICE_MS) { /* one step at a time */ }
  const rep = report(r, view, r.steps - s0, performance.now() - t0, recycled);
  rep.budgetMs = 1000 * ((r.energyBudget?.seconds ?? 0) - b0);
  if (performance.now() - lastCheckpoint >= CHECKPOINT_MS) rep.checkpoint = takeCheckpoint(r);
  return moved(rep);
}

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
  lastCheckpoint = -Infinity;
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
    const end = r.steps + Math.max(0, Math.floor(n));
    return sliced(r, view, () => r.steps < end, recycled);
  }),
  /**
   * Advance towards simulated time `tEnd` (the compare view's lock-step): whole steps while one more does not pass
   * tEnd, within one time slice; the report says how far it got.
   */
  advanceUntil: guarded((tEnd: number, view: MapView, recycled?: Float32Array): ChunkReport => {
    const r = current();
    return sliced(r, view, () => r.time + r.dt <= tEnd * (1 + 1e-12) + 1e-9, recycled);
  }),
  /** Import a user module's JavaScript through a Blob URL, check its default export and register it under `key`. */
  loadModule: async (key: string, code: string): Promise<LoadedModule> => {
    const origin = moduleUrl(code);
    try {
      const def = await importUserModule(key, origin);
      return { key, name: def.name, order: def.order, description: def.description, origin, choices: describeOptions(def, run?.model.params.nLayers ?? 1) };
    } catch (e) {
      throw failure(e);
    }
  },
  /** Rebuild a run and put a checkpoint's state, time and step count back (a restarted worker). */
  restore: guarded((raw: unknown, spec: Spec, cp: Checkpoint | null, view: MapView): InitResult => {
    const res = start(raw, spec, view);
    const r = current();
    if (cp && cp.state.length === r.state.length) {
      r.state.set(cp.state);
      r.lastGood.set(cp.state);
      r.time = cp.time;
      r.steps = cp.step;
      if (cp.stepperState && cp.spec && JSON.stringify(cp.spec) === JSON.stringify(r.spec)) r.stepper.instance.loadState?.(cp.stepperState);
      r.trackEnergyBudget();
      const tracker = r.energyBudget;
      if (tracker) tracker.clock = () => performance.now() / 1000;
      res.report = report(r, view, 0, 0);
    }
    return res;
  }),
  /** A checkpoint now (e.g. before trying a new stepper). */
  checkpoint: guarded((): Checkpoint => {
    const c = takeCheckpoint(current());
    return transfer(c, c.stepperState ? [c.state.buffer as ArrayBuffer, c.stepperState.buffer as ArrayBuffer] : [c.state.buffer as ArrayBuffer]);
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
    lastCheckpoint = -Infinity; // the next report carries a checkpoint with the new stepper's spec
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
  /** Inspector: every field at one cell of the current state. */
  probe: guarded((cell: number) => probeCell(current(), work!, cell)),
  /**
   * Start the loaded scenario from a stored state (a NetCDF run file, its last record): bytes the user chose, or
   * a file under the app's public folder, fetched here. The state becomes the run's start (Reset returns to it).
   */
  startFrom: async (source: { url: string } | { bytes: Uint8Array; name: string }, view: MapView): Promise<{ info: StartStateInfo; report: ChunkReport }> => {
    try {
      const r = current();
      let bytes: Uint8Array;
      let file: string;
      if ("url" in source) {
        file = source.url;
        const res = await fetch(new URL(source.url, new URL(import.meta.env.BASE_URL, self.location.origin)));
        if (!res.ok) throw { name: "SolverError", code: "bad-input", field: "startState", message: `startState: ${file} could not be fetched (HTTP ${res.status})` } satisfies WorkerFailure;
        bytes = new Uint8Array(await res.arrayBuffer());
      } else {
        bytes = source.bytes;
        file = source.name;
      }
      const info = startFromFile(r, bytes, file);
      const rep = report(r, view, 0, 0);
      return transfer({ info, report: rep }, [rep.snapshot.values.buffer]);
    } catch (e) {
      throw (e && typeof e === "object" && "code" in e && "message" in e && !(e instanceof Error)) ? e : failure(e);
    }
  },
  /** The current state as a one-record NetCDF run file (moved, not copied). */
  netcdfSnapshot: guarded(() => { const b = netcdfSnapshot(current()); return transfer(b, [b.buffer]); }),
  /** Development builds only: crash the worker outside any call, so the UI's restart path can be tested. */
  crashForTesting: () => {
    if (!import.meta.env.DEV) return false;
    setTimeout(() => { throw new Error("deliberate worker crash (test hook)"); }, 0);
    return true;
  },
};

export type SimulationApi = typeof api;
expose(api);
