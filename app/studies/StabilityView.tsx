import { schemeTableau10 } from "d3";
import type { StabilityResult } from "../../workers/studyPool.js";
import { fmt } from "../format.js";
import type { Cell } from "../export.js";
import { Plot, type PlotSeries } from "./Plot.js";
import { TableExports } from "./ExportButtons.js";

/** Energy growth below this is drawn at it (the log axis has no zero). */
const GROWTH_FLOOR = 1e-6;

export const STABILITY_COLUMNS = ["label", "method", "maxStableDt", "ratioToRk4", "rk4DtLimit", "bracketed", "trials", "duration", "energyGrowthThreshold"];
export const TRIAL_COLUMNS = ["label", "dt", "ratioToRk4", "outcome", "energyGrowth", "steps", "simulatedSeconds", "reason"];

export function stabilityCells(results: readonly StabilityResult[]): Cell[][] {
  return results.map((r) => [r.label, r.method, r.maxStableDt, r.ratioToRk4, r.rk4DtLimit, r.bracketed, r.trials.length, r.duration, r.energyGrowthThreshold]);
}

export function trialCells(results: readonly StabilityResult[]): Cell[][] {
  return results.flatMap((r) => r.trials.map((t) => [r.label, t.dt, t.ratioToRk4, t.outcome, t.energyGrowth, t.steps, t.simulatedSeconds, t.reason]));
}

export function StabilityView({ results }: { results: StabilityResult[] }) {
  if (!results.length) return null;
  const threshold = results[0].energyGrowthThreshold;
  const top = Math.max(threshold * 10, ...results.flatMap((r) => r.trials.map((t) => t.energyGrowth ?? 0)));
  const series: PlotSeries[] = results.map((r, i) => ({
    name: `${r.label}: ${fmt(r.maxStableDt, 4)} s`, colour: schemeTableau10[i % 10], line: false,
    points: [...r.trials].sort((a, b) => a.dt - b.dt).map((t) => ({
      x: t.dt,
      // a run that blew up has no growth figure: drawn at the top edge
      y: t.energyGrowth === null ? top : Math.max(t.energyGrowth, GROWTH_FLOOR),
      marker: t.outcome === "stable" ? "circle" as const : "cross" as const,
      title: `${r.label} Δt = ${fmt(t.dt, 4)} s: ${t.outcome} — ${t.reason}`,
    })),
  }));
  const rk4 = results[0].rk4DtLimit;
  return (
    <div className="study-result" data-testid="stability-result">
      <p className="study-summary" data-testid="stability-summary">
        Trials of {fmt(results[0].duration)} s each (at least 50 steps), from the initial state with seeded noise of relative size {fmt(results[0].perturbation)};
        a trial passes if every state stays finite with positive thicknesses and the energy grows by at most {fmt(threshold)} of its scale
        ({results[0].energyScale === "initial" ? "the initial energy" : "the largest energy of an RK4 run at half its limit"}).
      </p>
      <div className="plot-row">
        <Plot title="Stability search: trials" testid="stability-trials" width={720} height={340} xLabel="Δt [s]" yLabel="energy growth (max E / scale − 1)" xLog yLog series={series}
          include={{ y: [GROWTH_FLOOR, top] }}
          marks={[{ x: rk4, y: null, label: "RK4 limit", colour: "#b00" }, { x: null, y: threshold, label: `threshold ${fmt(threshold)}`, colour: "#555" }]}
          note={<>Dots: stable trials; crosses: unstable (at the top edge: blew up). Growth below {fmt(GROWTH_FLOOR)} is drawn at {fmt(GROWTH_FLOOR)}. The legend gives each stepper's largest stable Δt.</>} />
      </div>
      <h3>Largest stable Δt <TableExports stem="stability-results" header={STABILITY_COLUMNS} rows={() => stabilityCells(results)} json={() => results} /></h3>
      <table className="study-table" data-testid="stability-table">
        <thead><tr><th>stepper</th><th>largest stable Δt</th><th>× RK4 limit</th><th>bracketed</th><th>trials</th></tr></thead>
        <tbody>
          {results.map((r) => (
            <tr key={r.label}><td>{r.label}</td><td><b>{fmt(r.maxStableDt, 4)} s</b></td><td>{fmt(r.ratioToRk4, 3)}</td><td>{r.bracketed ? "yes" : "no"}</td><td>{r.trials.length}</td></tr>
          ))}
        </tbody>
      </table>
      <h3>Trials <TableExports stem="stability-trials-table" header={TRIAL_COLUMNS} rows={() => trialCells(results)} json={() => results.map((r) => ({ label: r.label, trials: r.trials }))} /></h3>
      <details><summary>every trial</summary>
        <table className="study-table" data-testid="stability-trials-list">
          <thead><tr><th>stepper</th><th>Δt [s]</th><th>outcome</th><th>growth</th><th>reason</th></tr></thead>
          <tbody>
            {results.flatMap((r) => r.trials.map((t, j) => (
              <tr key={`${r.label}-${j}`}><td>{r.label}</td><td>{fmt(t.dt, 4)}</td><td>{t.outcome}</td><td>{t.energyGrowth === null ? "—" : fmt(t.energyGrowth, 2)}</td><td>{t.reason}</td></tr>
            )))}
          </tbody>
        </table>
      </details>
    </div>
  );
}
