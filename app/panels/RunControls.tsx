import { fmt, formatDays } from "../format.js";
import type { Rates } from "../useSandbox.js";

interface RunControlsProps {
  readonly running: boolean;
  readonly ready: boolean;
  readonly time: number;
  readonly steps: number;
  readonly rates: Rates;
  readonly label: string;
  readonly onToggle: () => void;
  readonly onStep: () => void;
  readonly onReset: () => void;
}

export function RunControls(p: RunControlsProps) {
  return (
    <section className="run-controls" aria-label="Run controls" data-testid="run-controls">
      <button data-testid="run-button" className="primary" disabled={!p.ready} onClick={p.onToggle} title="Space">
        {p.running ? "Pause" : "Run"}
      </button>
      <button data-testid="step-button" disabled={!p.ready || p.running} onClick={p.onStep} title="S">Step</button>
      <button data-testid="reset-button" disabled={!p.ready} onClick={p.onReset}>Reset</button>
      <dl className="stats">
        <div><dt>simulated</dt><dd data-testid="sim-time">{formatDays(p.time)}</dd></div>
        <div><dt>days / second</dt><dd data-testid="days-per-second">{p.running ? fmt(p.rates.daysPerSecond) : "—"}</dd></div>
        <div><dt>steps</dt><dd data-testid="step-count">{p.steps}</dd></div>
        <div><dt>tendency calls / step</dt><dd data-testid="rhs-per-step">{Number.isFinite(p.rates.rhsPerStep) ? fmt(p.rates.rhsPerStep) : "—"}</dd></div>
        <div><dt>matvecs / step</dt><dd data-testid="matvecs-per-step">{Number.isFinite(p.rates.matvecsPerStep) ? fmt(p.rates.matvecsPerStep) : "—"}</dd></div>
        <div className="stepper-stat"><dt>stepper</dt><dd data-testid="stepper-label" title={p.label}>{p.label}</dd></div>
      </dl>
    </section>
  );
}
