import { useEffect, useRef, useState } from "react";
import type { Scenario, WorkerFailure } from "../../workers/protocol.js";
import { isCancelled, StudyPool, type PoolProgress, type StabilityResult, type StudyOutcome, type SweepResult } from "../../workers/studyPool.js";
import { failureMessage } from "../../workers/client.js";
import { StabilityView } from "./StabilityView.js";
import { SweepView } from "./SweepView.js";

/**
 * "Studies": the stability search and the convergence sweep with work-precision on the scenario loaded in the
 * sandbox, run in a pool of workers (one per core). The results are the CLI's for the same inputs.
 */
type Kind = "stability" | "sweep";

interface Outcome {
  kind: Kind;
  scenario: string;
  status: "completed" | "cancelled";
  stability?: StabilityResult[];
  sweep?: SweepResult;
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

const seconds = (s: number) => (!Number.isFinite(s) ? "—" : s < 60 ? `${s.toFixed(1)} s` : `${Math.floor(s / 60)} min ${Math.round(s % 60)} s`);

export function StudiesPanel({ scenario, scenarioName }: { scenario: () => Scenario | null; scenarioName: string }) {
  const pool = useRef<StudyPool | null>(null);
  const [kind, setKind] = useState<Kind>("stability");
  const [steppers, setSteppers] = useState("rk4,ssprk3");
  const [factors, setFactors] = useState("1,0.5,0.25");
  const [duration, setDuration] = useState("3600");
  const [trialDuration, setTrialDuration] = useState("");
  const [tolerance, setTolerance] = useState("0.02");
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
    try {
      const p = thePool();
      const list = await p.parseSteppers(steppers);
      let out: StudyOutcome<StabilityResult[] | SweepResult, unknown>;
      if (kind === "stability") {
        const options = { duration: optionalNumber(trialDuration, "trial duration"), tolerance: optionalNumber(tolerance, "tolerance") };
        out = await p.stability({ scenario: s, steppers: list, options }, setProgress);
        setOutcome(out.status === "completed"
          ? { kind, scenario: s.name, status: "completed", stability: out.result as StabilityResult[], done: list.length, total: list.length, wallSeconds: out.wallSeconds, workers: out.workers }
          : { kind, scenario: s.name, status: "cancelled", stability: (out.partial as (StabilityResult | undefined)[]).filter((r): r is StabilityResult => !!r), done: out.done, total: out.total, wallSeconds: out.wallSeconds, workers: out.workers });
      } else {
        const definition = { steppers: list, dtFactors: numberList(factors, "Δt factors"), duration: optionalNumber(duration, "duration") };
        out = await p.sweep({ scenario: s, definition }, setProgress);
        setOutcome(out.status === "completed"
          ? { kind, scenario: s.name, status: "completed", sweep: out.result as SweepResult, done: (out.result as SweepResult).rows.length, total: (out.result as SweepResult).rows.length, wallSeconds: out.wallSeconds, workers: out.workers }
          : { kind, scenario: s.name, status: "cancelled", done: out.done, total: out.total, wallSeconds: out.wallSeconds, workers: out.workers });
      }
    } catch (e) {
      if (!isCancelled(e)) setError(failureMessage(e));
    } finally {
      setRunning(false);
    }
  };

  const f = progress?.fraction ?? 0;
  return (
    <section className="card studies" aria-label="Studies" data-testid="studies-panel">
      <div className="card-head">
        <h2>Studies</h2>
        <span className="hint">on <b>{scenarioName}</b> as loaded, in {thePool().size} worker{thePool().size > 1 ? "s" : ""} (one per core); the same numbers as the command line's <code>stability</code> and <code>sweep</code></span>
      </div>
      <div className="study-form">
        <div role="tablist">
          <button role="tab" data-testid="study-kind-stability" aria-selected={kind === "stability"} className={kind === "stability" ? "active" : ""} onClick={() => setKind("stability")} disabled={running}>Stability search</button>
          <button role="tab" data-testid="study-kind-sweep" aria-selected={kind === "sweep"} className={kind === "sweep" ? "active" : ""} onClick={() => setKind("sweep")} disabled={running}>Convergence &amp; work-precision</button>
        </div>
        <label>Steppers <input data-testid="study-steppers" value={steppers} onChange={(e) => setSteppers(e.target.value)} size={44} disabled={running}
          title="comma-separated, options in parentheses: rk4,etdrk4(linear=modes:1;backend=krylov)" /></label>
        {kind === "stability" ? (
          <>
            <label>Trial length [s] <input data-testid="study-trial-duration" value={trialDuration} placeholder="default" onChange={(e) => setTrialDuration(e.target.value)} size={8} disabled={running}
              title="simulated length of every trial; default: the scenario's duration or 300 × the RK4 limit, whichever is shorter" /></label>
            <label>Bracket tolerance <input data-testid="study-tolerance" value={tolerance} onChange={(e) => setTolerance(e.target.value)} size={6} disabled={running} /></label>
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
            ? `Done: ${outcome.total} ${outcome.kind === "sweep" ? "runs" : "searches"} on ${outcome.scenario} in ${seconds(outcome.wallSeconds)} with ${outcome.workers} worker${outcome.workers > 1 ? "s" : ""}.`
            : `Cancelled after ${seconds(outcome.wallSeconds)}: ${outcome.done} of ${outcome.total} ${outcome.kind === "sweep" ? "runs" : "searches"} had finished${outcome.kind === "sweep" ? " (no fits on part of the rows)" : ""}.`}
        </p>
      )}
      {outcome?.stability && !running && <StabilityView results={outcome.stability} />}
      {outcome?.sweep && !running && <SweepView result={outcome.sweep} />}
    </section>
  );
}
