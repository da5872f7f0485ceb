import { useEffect, useRef, useState } from "react";
import type { CellOutlines, Scenario, WorkerFailure } from "../../workers/protocol.js";
import { isCancelled, StudyPool, type PoolProgress, type StabilityResult, type StatisticsOutcome, type SweepResult } from "../../workers/studyPool.js";
import { StatisticsView } from "./StatisticsView.js";
import { failureMessage } from "../../workers/client.js";
import { StabilityView } from "./StabilityView.js";
import { SweepView } from "./SweepView.js";
import { lastCode, loadCode, moduleKey } from "../code/userCode.js";
import { EDITOR_MODULE_PREFIX } from "../../solver/scenario/stepperCode.js";
import { locateInSource, transpile, type Transpiled } from "../code/transpile.js";

/**
 * "Studies": the stability search and the convergence sweep with work-precision on the scenario loaded in the
 * sandbox, run in a pool of workers (one per core). The results are the CLI's for the same inputs.
 */
type Kind = "stability" | "sweep" | "statistics";

interface Outcome {
  kind: Kind;
  scenario: string;
  status: "completed" | "cancelled";
  stability?: StabilityResult[];
  sweep?: SweepResult;
  statistics?: StatisticsOutcome;
  outlines?: CellOutlines;
  nLayers?: number;
  done: number;
  total: number;
  wallSeconds: number;
  workers: number;
}

function numberList(text: string, field: string): number[] {
  const parts = text.split(",").map((p) => p.trim());
  const out = parts.map(Number);
  if (!parts.length || parts.some((p) => p === "") || out.some((v) => !(v > 0 && Number.isFinite(v)))) {
    throw { name: "SolverError", code: "bad-input", field, message: `${field}: must be a comma-separated list of positive numbers, got "${text}"` } satisfies WorkerFailure;
  }
  return out;
}

function optionalNumber(text: string, field: string): number | undefined {
  if (text.trim() === "") return undefined;
  const v = Number(text);
  if (!(v > 0 && Number.isFinite(v))) throw { name: "SolverError", code: "bad-input", field, message: `${field}: must be a positive number, got "${text}"` } satisfies WorkerFailure;
  return v;
}

/**
 * The code-panel steppers a study names (`editor:NAME`): their code as saved by the code panel, types stripped, for
 * every study worker to import; one message naming the field when a name has no code or the code does not compile.
 */
function studyModules(list: readonly Record<string, unknown>[]): { modules: { key: string; code: string }[]; maps: Map<string, Transpiled> } {
  const modules: { key: string; code: string }[] = [];
  const maps = new Map<string, Transpiled>();
  for (const spec of list) {
    const key = typeof spec.module === "string" ? spec.module : null;
    if (!key || maps.has(key)) continue;
    const name = key.slice(EDITOR_MODULE_PREFIX.length);
    const code = loadCode(name);
    if (!code) throw { name: "SolverError", code: "bad-input", field: "steppers", message: `steppers: ${key}: the code panel holds no stepper named "${name}" (write or open it there; it is kept once applied)` } satisfies WorkerFailure;
    const t = transpile(code.source, code.language, name);
    if (!t.ok) throw { name: "SolverError", code: "bad-input", field: "steppers", message: `steppers: ${key}: line ${t.line}, column ${t.column} of your code: ${t.message}` } satisfies WorkerFailure;
    modules.push({ key, code: t.code });
    maps.set(key, t);
  }
  return { modules, maps };
}

const seconds = (s: number) => (!Number.isFinite(s) ? "—" : s < 60 ? `${s.toFixed(1)} s` : `${Math.floor(s / 60)} min ${Math.round(s % 60)} s`);

export function StudiesPanel({ scenario, scenarioName, outlines }: { scenario: () => Scenario | null; scenarioName: string; outlines?: CellOutlines }) {
  const pool = useRef<StudyPool | null>(null);
  const [kind, setKind] = useState<Kind>("stability");
  const [steppers, setSteppers] = useState("rk4,ssprk3");
  const [factors, setFactors] = useState("1,0.5,0.25");
  const [duration, setDuration] = useState("3600");
  const [trialDuration, setTrialDuration] = useState("");
  const [tolerance, setTolerance] = useState("0.02");
  const [spinUp, setSpinUp] = useState("3600");
  const [windowLength, setWindowLength] = useState("7200");
  const [sampleEvery, setSampleEvery] = useState("");
  const [ensemble, setEnsemble] = useState("3");
  const [statDts, setStatDts] = useState("0.5,0.25");
  const [progress, setProgress] = useState<PoolProgress | null>(null);
  const [running, setRunning] = useState(false);
  const [error, setError] = useState<string | null>(null);
  const [outcome, setOutcome] = useState<Outcome | null>(null);

  useEffect(() => () => pool.current?.dispose(), []);
  const thePool = () => (pool.current ??= new StudyPool());

  const start = async () => {
    const s = scenario();
    if (!s || running) return;
    setError(null);
    setProgress(null);
    setRunning(true);
    let maps = new Map<string, Transpiled>();
    try {
      const p = thePool();
      const list = await p.parseSteppers(steppers);
      const user = studyModules(list);
      maps = user.maps;
      p.setModules(user.modules);
      if (kind === "stability") {
        const options = { duration: optionalNumber(trialDuration, "trial duration"), tolerance: optionalNumber(tolerance, "tolerance") };
        const out = await p.stability({ scenario: s, steppers: list, options }, setProgress);
        setOutcome(out.status === "completed"
          ? { kind, scenario: s.name, status: "completed", stability: out.result, done: list.length, total: list.length, wallSeconds: out.wallSeconds, workers: out.workers }
          : { kind, scenario: s.name, status: "cancelled", stability: out.partial.filter((r): r is StabilityResult => !!r), done: out.done, total: out.total, wallSeconds: out.wallSeconds, workers: out.workers });
      } else if (kind === "statistics") {
        const ens = optionalNumber(ensemble, "ensemble");
        const definition = {
          steppers: list, dtFactors: numberList(statDts, "Δt factors"), spinUp: spinUp.trim() === "" ? 0 : Number(spinUp),
          window: optionalNumber(windowLength, "window") ?? NaN, sampleEvery: optionalNumber(sampleEvery, "sample interval"), ensemble: ens,
        };
        const o = outlines;
        const nLayers = s.layers.length;
        const res = await p.statistics({ scenario: s, definition }, setProgress);
        setOutcome(res.status === "completed"
          ? { kind, scenario: s.name, status: "completed", statistics: res.result, outlines: o, nLayers, done: res.result.result.rows.length, total: res.result.result.rows.length, wallSeconds: res.wallSeconds, workers: res.workers }
          : { kind, scenario: s.name, status: "cancelled", done: res.done, total: res.total, wallSeconds: res.wallSeconds, workers: res.workers });
      } else {
        const definition = { steppers: list, dtFactors: numberList(factors, "Δt factors"), duration: optionalNumber(duration, "duration") };
        const out = await p.sweep({ scenario: s, definition }, setProgress);
        setOutcome(out.status === "completed"
          ? { kind, scenario: s.name, status: "completed", sweep: out.result, done: out.result.rows.length, total: out.result.rows.length, wallSeconds: out.wallSeconds, workers: out.workers }
          : { kind, scenario: s.name, status: "cancelled", done: out.done, total: out.total, wallSeconds: out.wallSeconds, workers: out.workers });
      }
    } catch (e) {
      if (!isCancelled(e)) {
        // a fault in the user's code names a place in a worker's Blob URL: name the place in the user's text instead
        let message = failureMessage(e);
        for (const origin of pool.current?.moduleOrigins() ?? []) {
          for (const t of maps.values()) {
            const at = locateInSource(message, origin, t);
            if (at) { message = at.text; break; }
          }
        }
        setError(message);
      }
    } finally {
      setRunning(false);
    }
  };

  const f = progress?.fraction ?? 0;
  const mine = lastCode()?.name;
  return (
    <section className="card studies" aria-label="Studies" data-testid="studies-panel">
      <div className="card-head">
        <h2>Studies</h2>
        <span className="hint">on <b>{scenarioName}</b> from its initial state (not a stored start), in {thePool().size} worker{thePool().size > 1 ? "s" : ""} (one per core); the same numbers as the command line's <code>stability</code>, <code>sweep</code> and <code>statistics</code></span>
      </div>
      <div className="study-form">
        <div role="tablist">
          <button role="tab" data-testid="study-kind-stability" aria-selected={kind === "stability"} className={kind === "stability" ? "active" : ""} onClick={() => setKind("stability")} disabled={running}>Stability search</button>
          <button role="tab" data-testid="study-kind-statistics" aria-selected={kind === "statistics"} className={kind === "statistics" ? "active" : ""} onClick={() => setKind("statistics")} disabled={running}>Statistics</button>
          <button role="tab" data-testid="study-kind-sweep" aria-selected={kind === "sweep"} className={kind === "sweep" ? "active" : ""} onClick={() => setKind("sweep")} disabled={running}>Convergence &amp; work-precision</button>
        </div>
        <label>Steppers <input data-testid="study-steppers" value={steppers} onChange={(e) => setSteppers(e.target.value)} size={44} disabled={running}
          title="comma-separated, options in parentheses: rk4,etdrk4(linear=modes:1;backend=krylov); editor:NAME for the code panel's stepper NAME" /></label>
        {mine && <span className="hint" data-testid="study-own-stepper">your stepper: <code>{moduleKey(mine)}</code></span>}
        {kind === "stability" ? (
          <>
            <label>Trial length [s] <input data-testid="study-trial-duration" value={trialDuration} placeholder="default" onChange={(e) => setTrialDuration(e.target.value)} size={8} disabled={running}
              title="simulated length of every trial; default: the scenario's duration or 300 × the RK4 limit, whichever is shorter" /></label>
            <label>Bracket tolerance <input data-testid="study-tolerance" value={tolerance} onChange={(e) => setTolerance(e.target.value)} size={6} disabled={running} /></label>
          </>
        ) : kind === "statistics" ? (
          <>
            <label>Δt factors <input data-testid="study-stat-dt-factors" value={statDts} onChange={(e) => setStatDts(e.target.value)} size={12} disabled={running}
              title="multiples of the scenario's RK4 gravity-wave limit" /></label>
            <label>Spin-up [s] <input data-testid="study-spin-up" value={spinUp} onChange={(e) => setSpinUp(e.target.value)} size={8} disabled={running} /></label>
            <label>Window [s] <input data-testid="study-window" value={windowLength} onChange={(e) => setWindowLength(e.target.value)} size={8} disabled={running} /></label>
            <label>Sample every [s] <input data-testid="study-sample-every" value={sampleEvery} placeholder="default" onChange={(e) => setSampleEvery(e.target.value)} size={6} disabled={running} /></label>
            <label>Ensemble <input data-testid="study-ensemble" value={ensemble} onChange={(e) => setEnsemble(e.target.value)} size={3} disabled={running}
              title="reference runs started a round-off apart; their spread is the noise floor (1: no floor)" /></label>
          </>
        ) : (
          <>
            <label>Δt factors <input data-testid="study-dt-factors" value={factors} onChange={(e) => setFactors(e.target.value)} size={16} disabled={running}
              title="multiples of the scenario's RK4 gravity-wave limit" /></label>
            <label>Duration [s] <input data-testid="study-duration" value={duration} onChange={(e) => setDuration(e.target.value)} size={8} disabled={running} /></label>
          </>
        )}
        <button className="primary" data-testid="study-run" onClick={() => void start()} disabled={running}>Run study</button>
        <button data-testid="study-cancel" onClick={() => pool.current?.cancel()} disabled={!running}>Cancel</button>
      </div>
      {(running || progress) && (
        <div className="study-progress" data-testid="study-status" data-state={running ? "running" : outcome?.status ?? "idle"}>
          <progress data-testid="study-progress" max={1} value={f} />
          <span data-testid="study-progress-text">
            {Math.round(100 * f)}% · {progress ? `${progress.done} of ${progress.total} runs` : "starting"} · elapsed {seconds(progress?.elapsed ?? 0)} ·
            {" "}left {running ? (progress && Number.isFinite(progress.remaining) ? `about ${seconds(progress.remaining)}` : "estimating") : "0 s"}
            {running && progress?.running.length ? ` · now: ${progress.running.join("; ")}` : ""}
          </span>
        </div>
      )}
      {error && <p className="error" role="alert" data-testid="study-error">{error}</p>}
      {outcome && !running && (
        <p className="study-outcome" data-testid="study-outcome">
          {outcome.status === "completed"
            ? `Done: ${outcome.total} ${outcome.kind === "stability" ? "searches" : "runs"} on ${outcome.scenario} in ${seconds(outcome.wallSeconds)} with ${outcome.workers} worker${outcome.workers > 1 ? "s" : ""}.`
            : `Cancelled after ${seconds(outcome.wallSeconds)}: ${outcome.done} of ${outcome.total} ${outcome.kind === "stability" ? "searches" : "runs"} had finished${outcome.kind === "sweep" ? " (no fits on part of the rows)" : ""}.`}
        </p>
      )}
      {outcome?.stability && !running && <StabilityView results={outcome.stability} />}
      {outcome?.sweep && !running && <SweepView result={outcome.sweep} />}
      {outcome?.statistics && outcome.outlines && !running && <StatisticsView outcome={outcome.statistics} outlines={outcome.outlines} nLayers={outcome.nLayers ?? 1} />}
    </section>
  );
}
