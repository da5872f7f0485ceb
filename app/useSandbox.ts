import { useCallback, useEffect, useMemo, useRef, useState } from "react";
import { transfer } from "comlink";
import { failureMessage, isTimeoutReason, isWorkerFailure, SolverClient } from "../workers/client.js";
import type {
  Checkpoint, ChunkReport, InitResult, LoadedModule, MapView, Scenario, Snapshot, StepperSpec, UnstableInfo, WorkerFailure,
} from "../workers/protocol.js";
import { splitScenarioCode, withCode, type StepperCode } from "./code/userCode.js";
import { fmt, formatDays } from "./format.js";
import { thin, type BudgetSample } from "./drift.js";
import { mapPerf } from "./perf.js";
import { decodeSetup, encodeSetup } from "./share.js";
import type { StartStateInfo } from "../workers/startState.js";
import { START_STATES } from "../workers/startStateList.js";

/**
 * The one container hook: owns the solver worker, the run loop, the latest report and snapshot, the budget
 * history and the notices. Panels get plain data and callbacks from it.
 */

export const DEFAULT_SCENARIO = "eddying-jets";
/** Worker time per chunk the loop aims for [ms]: short enough for a snappy pause, long enough to amortise messages. */
const CHUNK_TARGET_MS = 30;
const HISTORY_LIMIT = 3000;
/** While running, panels (text, plots) refresh at most this often [ms]; the map redraws on every snapshot. */
const PANEL_REFRESH_MS = 200;
/**
 * Longest one call to the solver may take [ms] — one step, or building a stepper. The worker answers every
 * ≤ 50 ms slice, so only a single step (or a stepper's create) that runs longer trips it: the worker is then
 * ended and a new one continues from the last good state. Shown in the page.
 */
export const STEP_TIMEOUT_MS = 5000;
/** Reset waits this long for a step in progress before it ends the worker instead [ms]. */
const RESET_PATIENCE_MS = 150;

export interface Notice {
  id: number;
  kind: "error" | "warning" | "info";
  text: string;
  testid: string;
}

export type Setup = Omit<InitResult, "report">;
export interface Builtin { name: string; description: string; scenario: unknown }

export interface Rates {
  daysPerSecond: number;
  rhsPerStep: number;
  matvecsPerStep: number;
}

export function useSandbox() {
  const clientRef = useRef<SolverClient | null>(null);
  const [setup, setSetup] = useState<Setup | null>(null);
  const [builtins, setBuiltins] = useState<Builtin[]>([]);
  const [report, setReport] = useState<ChunkReport | null>(null);
  const [running, setRunning] = useState(false);
  const [view, setViewState] = useState<MapView>({ kind: "surface", layer: 0 });
  const [notices, setNotices] = useState<Notice[]>([]);
  const [unstable, setUnstable] = useState<UnstableInfo | null>(null);
  const [rates, setRates] = useState<Rates>({ daysPerSecond: 0, rhsPerStep: NaN, matvecsPerStep: NaN });
  const [scenarioError, setScenarioError] = useState<WorkerFailure | null>(null);
  const [stepperError, setStepperError] = useState<WorkerFailure | null>(null);
  const [shareUrl, setShareUrl] = useState("");
  const [snapshotVersion, setSnapshotVersion] = useState(0);
  const [historyVersion, setHistoryVersion] = useState(0);
  const [loading, setLoading] = useState(true);
  /** The stored state the run started from, if any (view tools). */
  const [startInfo, setStartInfo] = useState<StartStateInfo | null>(null);

  const runningRef = useRef(false);
  const viewRef = useRef(view);
  const snapshotRef = useRef<Snapshot | null>(null);
  const spareRef = useRef<Float32Array | null>(null);
  const historyRef = useRef<BudgetSample[]>([]);
  const scenarioRef = useRef<Scenario | null>(null);
  const stepsPerChunk = useRef(1);
  const clockRef = useRef<{ wall: number; sim: number }[]>([]);
  const noticeId = useRef(0);
  const builtinsRef = useRef<Builtin[]>([]);
  const snapshotListeners = useRef(new Set<() => void>());
  const pendingReport = useRef<ChunkReport | null>(null);
  const pendingRates = useRef<Rates | null>(null);
  const flushTimer = useRef<ReturnType<typeof setTimeout> | null>(null);
  const lastFlush = useRef(0);
  /** The hash this page wrote itself (sharing), so that it is not reloaded as if a new link had been pasted. */
  const lastSharedHash = useRef("");

  const notify = useCallback((kind: Notice["kind"], testid: string, text: string) => {
    const id = ++noticeId.current;
    setNotices((ns) => [...ns.filter((n) => n.testid !== testid), { id, kind, text, testid }]);
  }, []);
  const dismiss = useCallback((id: number) => setNotices((ns) => ns.filter((n) => n.id !== id)), []);

  const client = useCallback((): SolverClient => clientRef.current!, []);

  /** Take the spare snapshot buffer (to be moved to the worker and refilled there). */
  const takeSpare = (): Float32Array | undefined => {
    const s = spareRef.current;
    spareRef.current = null;
    return s && s.byteLength > 0 ? transfer(s, [s.buffer]) : undefined;
  };

  /** Push pending panel data into React state (throttled while running, at once otherwise). */
  const flush = () => {
    if (flushTimer.current) { clearTimeout(flushTimer.current); flushTimer.current = null; }
    lastFlush.current = performance.now();
    if (pendingReport.current) { setReport(pendingReport.current); pendingReport.current = null; }
    if (pendingRates.current) { setRates(pendingRates.current); pendingRates.current = null; }
    setHistoryVersion((v) => v + 1);
    setSnapshotVersion((v) => v + 1);
  };
  const scheduleFlush = (now: boolean) => {
    if (now || !runningRef.current) { flush(); return; }
    if (flushTimer.current) return;
    const wait = Math.max(0, PANEL_REFRESH_MS - (performance.now() - lastFlush.current));
    flushTimer.current = setTimeout(flush, wait);
  };

  const acceptSnapshot = (s: Snapshot, now = true) => {
    const prev = snapshotRef.current;
    if (prev && prev.values !== s.values && prev.values.byteLength > 0) spareRef.current = prev.values;
    snapshotRef.current = s;
    mapPerf.snapshots++;
    if (s.recycled) mapPerf.recycled++;
    for (const f of snapshotListeners.current) f();
    scheduleFlush(now);
  };

  const acceptReport = (rep: ChunkReport, fresh = false) => {
    pendingReport.current = rep;
    const sample: BudgetSample = { time: rep.time, energy: rep.budget.energy, mass: rep.budget.mass, energyBudget: rep.energyBudget };
    noteProgress(rep);
    if (fresh) historyRef.current = [sample];
    else if (rep.chunkSteps > 0) historyRef.current = thin([...historyRef.current, sample], HISTORY_LIMIT);
    const c = rep.counters;
    const now = performance.now();
    const clock = clockRef.current;
    if (fresh) clock.length = 0;
    clock.push({ wall: now, sim: rep.time });
    while (clock.length > 2 && now - clock[0].wall > 2000) clock.shift();
    const first = clock[0];
    const daysPerSecond = clock.length > 1 && now > first.wall ? (rep.time - first.sim) / 86400 / ((now - first.wall) / 1000) : 0;
    pendingRates.current = {
      daysPerSecond,
      rhsPerStep: c.steps ? c.rhsEvaluations / c.steps : NaN,
      matvecsPerStep: c.steps ? c.matvecs / c.steps : NaN,
    };
    if (rep.unstable) setUnstable(rep.unstable);
    acceptSnapshot(rep.snapshot, fresh || !!rep.unstable);
  };

  const adopt = (res: InitResult) => {
    const { report: rep, ...rest } = res;
    setSetup(rest);
    scenarioRef.current = { ...res.scenario, stepper: res.stepper.spec };
    setUnstable(null);
    checkpointRef.current = null;
    progressSpecs.current = [];
    setScenarioError(null);
    setStepperError(null);
    spareRef.current = null;
    snapshotRef.current = null;
    const nLayers = res.description.nLayers;
    if (viewRef.current.layer >= nLayers) setView({ ...viewRef.current, layer: nLayers - 1 });
    acceptReport(rep, true);
  };

  const stop = () => {
    runningRef.current = false;
    setRunning(false);
    flush();
  };

  const handleFailure = (e: unknown, what: string) => {
    stop();
    if (isWorkerFailure(e) && (e.code === "worker-died" || e.code === "timeout")) return; // the restart notice says it
    notify("error", "run-error", `${what}: ${failureMessage(e)}`);
  };

  /** Validate and load a scenario object; returns the failure instead of throwing. */
  const load = useCallback(async (raw: unknown, stepper?: StepperSpec): Promise<WorkerFailure | null> => {
    stop();
    try {
      const res = await client().call((r) => r.init(raw, stepper, viewRef.current), 120_000);
      adopt(res);
      // a built-in that comes with a spun-up state starts from it
      setStartInfo(null);
      const url = START_STATES[res.scenario.name];
      if (url) {
        await startFrom({ url }).catch((e) => notify("warning", "start-state", `The stored start of ${res.scenario.name} could not be used (${failureMessage(e)}); it starts from its initial state.`));
      }
      return null;
    } catch (e) {
      return isWorkerFailure(e) ? e : { name: "WorkerError", code: "internal", message: failureMessage(e) };
    }
  }, []);

  const loadDefault = async () => {
    const b = builtinsRef.current.find((x) => x.name === DEFAULT_SCENARIO) ?? builtinsRef.current[0];
    if (b) await load(b.scenario);
  };

  /** Start from the link in the address bar, or the default scenario. */
  const startFromLocation = async () => {
    setLoading(true);
    const decoded = decodeSetup(window.location.hash);
    if (decoded.kind === "ok") {
      const fail = await load(takeLinkCode(decoded.scenario));
      if (!fail) { setLoading(false); return; }
      notify("warning", "link-error", `The shared link could not be used: ${fail.message}. The default scenario was loaded instead.`);
    } else if (decoded.kind === "broken") {
      notify("warning", "link-error", `The shared link could not be used: ${decoded.reason}. The default scenario was loaded instead.`);
    }
    await loadDefault();
    setLoading(false);
  };

  useEffect(() => {
    /** Fetch the built-ins, then load the link in the address bar or the default scenario. */
    const boot = async () => {
      try {
        builtinsRef.current = await c.call((r) => r.builtins(), 120_000);
        setBuiltins(builtinsRef.current);
        await startFromLocation();
      } catch (e) {
        setLoading(false);
        if (!(isWorkerFailure(e) && e.code === "worker-died")) notify("error", "run-error", `The solver could not start: ${failureMessage(e)}`);
      }
    };
    const c = new SolverClient({
      callTimeoutMs: STEP_TIMEOUT_MS,
      onRestart: (reason, gaveUp) => {
        stop();
        if (gaveUp) {
          notify("error", "worker-restarted", `The solver worker keeps stopping (${reason}); it was not started again. Reload the page to try once more.`);
          return;
        }
        if (recoverRef.current(reason)) return; // a watchdog stop or a reset during a long step: handled there
        notify("error", "worker-restarted", `The solver worker stopped (${reason}). A new one was started and the run was set back to its start.`);
        const s = scenarioRef.current;
        void (async () => {
          if (!builtinsRef.current.length) { await boot(); return; }
          const fail = s ? await load(s) : null;
          if (!s || fail) await loadDefault();
        })();
      },
    });
    clientRef.current = c;
    void boot();
    const onHash = () => { if (window.location.hash !== lastSharedHash.current) void startFromLocation(); };
    window.addEventListener("hashchange", onHash);
    if (import.meta.env.DEV) {
      (window as unknown as { __stepwell: unknown }).__stepwell = { crashWorker: () => c.call((r) => r.crashForTesting()) };
    }
    return () => {
      window.removeEventListener("hashchange", onHash);
      runningRef.current = false;
      c.dispose();
    };
  }, []);

  /** Each run gets a number, so a loop still awaiting its last chunk after a quick pause/run ends instead of doubling up. */
  const loopId = useRef(0);
  const runLoop = async (id: number) => {
    while (runningRef.current && id === loopId.current) {
      let rep: ChunkReport;
      try {
        const n = stepsPerChunk.current;
        busySince.current = performance.now();
        rep = await client().call((r) => r.advance(n, viewRef.current, takeSpare()));
        busySince.current = 0;
      } catch (e) {
        busySince.current = 0;
        handleFailure(e, "The run stopped");
        return;
      }
      acceptReport(rep);
      if (rep.unstable) { stop(); return; }
      if (rep.chunkSteps > 0) {
        const perStep = Math.max(rep.chunkMs, 0.05) / rep.chunkSteps;
        stepsPerChunk.current = Math.max(1, Math.min(2000, Math.round(CHUNK_TARGET_MS / perStep)));
      }
    }
  };

  const run = useCallback(() => {
    if (runningRef.current || !scenarioRef.current) return;
    runningRef.current = true;
    setRunning(true);
    clockRef.current.length = 0;
    void runLoop(++loopId.current);
  }, []);

  const pause = useCallback(() => stop(), []);
  const toggle = useCallback(() => (runningRef.current ? stop() : run()), [run]);

  const stepOnce = useCallback(async () => {
    if (runningRef.current || !scenarioRef.current) return;
    try {
      busySince.current = performance.now();
      acceptReport(await client().call((r) => r.advance(1, viewRef.current, takeSpare())));
    } catch (e) {
      handleFailure(e, "The step failed");
    } finally {
      busySince.current = 0;
    }
  }, []);

  const reset = useCallback(async () => {
    stop();
    if (busySince.current && performance.now() - busySince.current > RESET_PATIENCE_MS) {
      // one long step is still computing: end that worker rather than wait for it, and start again from the start
      resetPending.current = true;
      client().restart("Reset was pressed while a step was still computing");
      return;
    }
    checkpointRef.current = null;
    try {
      acceptReport(await client().call((r) => r.reset(viewRef.current)), true);
      setUnstable(null);
    } catch (e) {
      handleFailure(e, "Reset failed");
    }
  }, []);

  const setView = useCallback((v: MapView) => {
    viewRef.current = v;
    setViewState(v);
    if (!runningRef.current && scenarioRef.current) {
      void client().call((r) => r.snapshot(v, takeSpare())).then(acceptSnapshot, (e) => handleFailure(e, "The map could not be drawn"));
    }
  }, []);

  const applyStepper = useCallback(async (spec: StepperSpec): Promise<boolean> => {
    try {
      const info = await client().call((r) => r.setStepper(spec));
      setSetup((s) => (s ? { ...s, stepper: { spec: info.spec, label: info.label, note: info.note } } : s));
      if (scenarioRef.current) scenarioRef.current = { ...scenarioRef.current, stepper: info.spec };
      setStepperError(null);
      setUnstable(null);
      setReport((rep) => (rep ? { ...rep, courant: info.courant, unstable: null } : rep));
      // the new stepper's counters start at zero: no per-step figures until it has stepped
      setRates((r) => ({ ...r, rhsPerStep: NaN, matvecsPerStep: NaN }));
      setNotices((ns) => ns.filter((n) => n.testid !== "run-error"));
      return true;
    } catch (e) {
      setStepperError(isWorkerFailure(e) ? e : { name: "WorkerError", code: "internal", message: failureMessage(e) });
      return false;
    }
  }, []);

  const applyScenario = useCallback(async (raw: unknown): Promise<boolean> => {
    const fail = await load(raw, (raw as { stepper?: StepperSpec }).stepper);
    setScenarioError(fail);
    return !fail;
  }, []);

  const importScenario = useCallback(async (text: string, fileName: string): Promise<boolean> => {
    stop();
    try {
      // a file exported with stepper code: the code waits in the editor for consent, the solver gets the rest
      let body = text;
      try { const raw: unknown = JSON.parse(text); if (raw && typeof raw === "object" && "stepperCode" in raw) body = JSON.stringify(takeLinkCode(raw)); } catch { /* the worker words the syntax error */ }
      adopt(await client().call((r) => r.initFromText(body, viewRef.current), 120_000));
      return true;
    } catch (e) {
      const f: WorkerFailure = isWorkerFailure(e) ? e : { name: "WorkerError", code: "internal", message: failureMessage(e) };
      setScenarioError({ ...f, message: `${fileName}: ${f.message}` });
      return false;
    }
  }, []);

  const currentScenario = useCallback(() => scenarioRef.current, []);

  const share = useCallback(() => {
    const s = scenarioRef.current;
    if (!s) return "";
    const hash = `#${encodeSetup(withCode(s, shareCodeRef.current))}`;
    lastSharedHash.current = hash;
    const url = `${window.location.origin}${window.location.pathname}${hash}`;
    window.history.replaceState(null, "", url);
    setShareUrl(url);
    navigator.clipboard?.writeText(url).catch(() => undefined);
    return url;
  }, []);

  const getSnapshot = useCallback(() => snapshotRef.current, []);
  /** The map subscribes here to redraw on every snapshot without a React render. */
  const subscribeSnapshot = useCallback((f: () => void) => {
    snapshotListeners.current.add(f);
    return () => { snapshotListeners.current.delete(f); };
  }, []);
  const history = useMemo(() => historyRef.current, [historyVersion]);

  // ---- User code, checkpoints and the watchdog's recovery (stepper code panel; never-block rule) ----
  /** Code of the editor modules loaded so far (key → JavaScript), loaded again into a restarted worker. */
  const modulesRef = useRef(new Map<string, string>());
  /** The last good state the worker sent (null: the scenario's start). */
  const checkpointRef = useRef<Checkpoint | null>(null);
  /** Stepper specs that made progress, most recent last: the watchdog falls back to one that is not the stopped one. */
  const progressSpecs = useRef<StepperSpec[]>([]);
  const busySince = useRef(0);
  const resetPending = useRef(false);
  const shareCodeRef = useRef<StepperCode | null>(null);
  const editorCodeRef = useRef<StepperCode | null>(null);
  const [linkCode, setLinkCode] = useState<{ code: StepperCode; spec: StepperSpec | null } | null>(null);
  const recoverRef = useRef<(reason: string) => boolean>(() => false);

  function noteProgress(rep: ChunkReport) {
    if (rep.checkpoint) checkpointRef.current = rep.checkpoint;
    const spec = scenarioRef.current?.stepper;
    if (!spec || rep.chunkSteps <= 0) return;
    const list = progressSpecs.current;
    const key = JSON.stringify(spec);
    if (!list.length || JSON.stringify(list[list.length - 1]) !== key) {
      progressSpecs.current = [...list.filter((x) => JSON.stringify(x) !== key), spec].slice(-8);
    }
  }

  /** A scenario from a link: the code it carries waits for consent; the solver gets the scenario without it. */
  function takeLinkCode(raw: unknown): unknown {
    const { scenario, code, spec } = splitScenarioCode(raw);
    setLinkCode(code ? { code, spec } : null);
    return scenario;
  }

  const reloadModules = async () => {
    for (const [key, js] of modulesRef.current) await client().call((r) => r.loadModule(key, js), 120_000).catch(() => undefined);
  };

  recoverRef.current = (reason: string): boolean => {
    // a watchdog stop (a call that timed out) or a Reset that ended a long step; other deaths restart from the start
    const s = scenarioRef.current;
    if (!s || !builtinsRef.current.length) return false;
    if (resetPending.current) {
      resetPending.current = false;
      checkpointRef.current = null;
      notify("info", "watchdog", "Reset: the step that was computing was abandoned (its worker was ended) and the run was set back to its start.");
      void reloadModules().then(() => load(s)).then((fail) => { if (fail) notify("error", "run-error", `Reset failed: ${fail.message}`); });
      return true;
    }
    if (!isTimeoutReason(reason)) return false; // a crash: the usual restart from the start
    const hung = s.stepper;
    const key = JSON.stringify(hung);
    const cp = checkpointRef.current;
    // the stepper that made the last good state, else the last other one that made progress, else RK4 at half its limit
    const earlier = cp && JSON.stringify(cp.spec) !== key ? cp.spec : [...progressSpecs.current].reverse().find((x) => JSON.stringify(x) !== key);
    const rk4Limit = setupRef.current?.description.rk4DtLimit ?? hung.dt;
    const fallback: StepperSpec = earlier ?? ({ method: "rk4", dt: Number((0.5 * rk4Limit).toPrecision(3)) } as StepperSpec);
    const where = cp ? `step ${cp.step}, t = ${formatDays(cp.time)}` : "its start";
    const label = hung.module ? `the stepper from the code panel (${String(hung.module).replace(/^editor:/, "")})` : `${hung.method}`;
    notify("error", "watchdog",
      `Stopped: one step of ${label} took longer than the ${STEP_TIMEOUT_MS / 1000} s time-out. ` +
      `The solver worker was ended and a new one started; the run goes on from the last good state (${where}) with ` +
      `${fallback.module ? String(fallback.module).replace(/^editor:/, "") : fallback.method} at Δt = ${fmt(fallback.dt)} s.`);
    void (async () => {
      try {
        await reloadModules();
        const res = await client().call((r) => r.restore(s, fallback, cp, viewRef.current), 120_000);
        const specs = progressSpecs.current;
        adopt(res);
        checkpointRef.current = cp;
        progressSpecs.current = specs;
      } catch (e) {
        notify("error", "run-error", `The run could not be restored: ${failureMessage(e)}`);
        await loadDefault();
      }
    })();
    return true;
  };

  /** Load an editor module's JavaScript into the solver worker (checked there; kept for restarts). */
  const loadModule = useCallback(async (key: string, js: string): Promise<LoadedModule> => {
    const m = await client().call((r) => r.loadModule(key, js));
    modulesRef.current.set(key, js);
    return m;
  }, []);
  /** The code panel's text, and whether it goes with share links and exports (not while it is the bare template). */
  const setShareCode = useCallback((c: StepperCode, share: boolean) => { editorCodeRef.current = c; shareCodeRef.current = share ? c : null; }, []);
  const editorCode = useCallback(() => editorCodeRef.current, []);
  const shareCode = useCallback(() => shareCodeRef.current, []);
  const dropLinkCode = useCallback(() => setLinkCode(null), []);
  const setupRef = useRef<Setup | null>(null);
  setupRef.current = setup;

  // view tools: the inspector reads every field at one cell of the current state
  const probe = useCallback((cell: number) => client().call((r) => r.probe(cell)), []);
  const netcdfSnapshot = useCallback(() => client().call((r) => r.netcdfSnapshot(), 120_000), []);
  /** Start from a stored state (a NetCDF run file): the run restarts there, the plots start afresh. */
  const startFrom = useCallback(async (source: { url: string } | { bytes: Uint8Array; name: string }) => {
    stop();
    const res = await client().call((r) => r.startFrom("bytes" in source ? transfer(source, [source.bytes.buffer]) : source, viewRef.current), 120_000);
    acceptReport(res.report, true);
    setUnstable(null);
    setStartInfo(res.info);
    return res.info;
  }, []);

  return {
    loadModule, linkCode, dropLinkCode, setShareCode, shareCode, editorCode, stepTimeoutMs: STEP_TIMEOUT_MS,
    loading, setup, builtins, report, running, view, notices, unstable, rates, scenarioError, stepperError, shareUrl,
    snapshotVersion, history, getSnapshot, subscribeSnapshot,
    run, pause, toggle, stepOnce, reset, setView, applyStepper, applyScenario, importScenario, currentScenario, share,
    dismiss, hideShare: () => setShareUrl(""),
    probe, netcdfSnapshot, startFrom, startInfo,
  };
}

export type Sandbox = ReturnType<typeof useSandbox>;
