import { useMemo } from "react";
import { schemeTableau10 } from "d3";
import type { SweepResult, SweepRow } from "../../workers/studyPool.js";
import { fmt } from "../format.js";
import type { Cell } from "../export.js";
import { Plot, type PlotSeries } from "./Plot.js";
import { TableExports } from "./ExportButtons.js";

/** The rows' columns, as the CLI's `sweep --csv` names them. */
export const SWEEP_COLUMNS = ["label", "method", "dt", "dtRatioToRk4", "status", "errorSurface", "errorThickness", "errorVelocity", "massDrift",
  "energyDrift", "energyResidual", "wallSeconds", "rhsEvaluations", "matvecs", "cost", "atReferenceFloor"] as const;

export function sweepCells(rows: readonly SweepRow[]): Cell[][] {
  return rows.map((r) => [r.label, r.method, r.dt, r.dtRatioToRk4, r.status, r.error.surface, r.error.thickness, r.error.velocity, r.massDrift,
    r.energyDrift, r.energyResidual, r.wallSeconds, r.rhsEvaluations, r.matvecs, r.cost, r.atReferenceFloor]);
}

const ORDER_COLUMNS = ["label", "order", "dtMin", "dtMax", "points", "orderSurface", "orderThickness", "orderVelocity", "note"];

/** Reference slopes 1…4 through a point below the data at the largest Δt, over the Δt range. */
function slopeGuides(rows: readonly SweepRow[], err: (r: SweepRow) => number | null) {
  const ok = rows.filter((r) => r.status === "completed" && (err(r) ?? 0) > 0);
  if (ok.length < 2) return [];
  const dts = ok.map((r) => r.dt);
  const lo = Math.min(...dts);
  const hi = Math.max(...dts);
  const e = Math.min(...ok.filter((r) => r.dt === hi).map((r) => err(r)!)) / 3;
  return [1, 2, 3, 4].map((p) => ({ label: `slope ${p}`, points: [[lo, e * (lo / hi) ** p], [hi, e]] as [number, number][] }));
}

export function SweepView({ result }: { result: SweepResult }) {
  const comp = result.workPrecision.component;
  const err = (r: SweepRow) => r.error[comp];
  const labels = useMemo(() => [...new Set(result.rows.map((r) => r.label))], [result]);
  const colour = (l: string) => schemeTableau10[labels.indexOf(l) % 10];
  const isRk4 = (l: string) => result.rows.some((r) => r.label === l && r.method === "rk4");
  const series = (x: (r: SweepRow) => number, withOrder: boolean): PlotSeries[] => labels.map((l) => {
    const o = result.orders[l];
    const name = withOrder ? `${l}: order ${o?.order === null || o?.order === undefined ? "n/a" : fmt(o.order, 3)}` : l;
    const mine = result.rows.filter((r) => r.label === l && r.status === "completed" && err(r) !== null).sort((a, b) => x(a) - x(b));
    return {
      name, colour: colour(l), width: isRk4(l) ? 2.6 : 1.6,
      points: mine.map((r) => ({ x: x(r), y: err(r)!, marker: isRk4(l) ? "square" : r.atReferenceFloor ? "open-circle" : "circle",
        title: `${l} Δt = ${fmt(r.dt)} s: error ${fmt(err(r)!)}` })),
    };
  });
  const floor = result.reference.floor[comp];
  const floorMark = { x: null, y: floor, label: `reference's own error ${fmt(floor, 2)}`, colour: "#777" };
  const tolMark = { x: null, y: result.workPrecision.tolerance, label: `requested error ${fmt(result.workPrecision.tolerance, 2)}`, colour: "#2a7" };
  const rk4 = result.workPrecision.rk4AtLimit;
  const unstable = result.rows.filter((r) => r.status !== "completed");
  const yLabel = `${comp} error (relative L2)`;
  return (
    <div className="study-result" data-testid="sweep-result">
      <p className="study-summary" data-testid="sweep-summary">
        Reference {result.reference.label} at Δt = {fmt(result.reference.dt)} s ({result.reference.steps} steps), its own {comp} error ≈ {fmt(floor, 2)};
        runs of {fmt(result.duration)} s. {result.workPrecision.best
          ? <>Cheapest run with error ≤ {fmt(result.workPrecision.tolerance)}: <b>{result.workPrecision.best.label}</b> at Δt = {fmt(result.workPrecision.best.dt)} s,
            {" "}{fmt(result.workPrecision.best.speedup, 3)}× cheaper than RK4 at its limit ({fmt(rk4.dt)} s, {rk4.cost} tendency evaluations).</>
          : <>No run reached an error ≤ {fmt(result.workPrecision.tolerance)}.</>}
        {unstable.length > 0 && <> Not plotted (no error): {unstable.map((r) => `${r.label} at ${fmt(r.dt)} s (${r.status})`).join(", ")}.</>}
      </p>
      {result.warnings.map((w) => <p key={w} className="study-warning">{w}</p>)}
      <div className="plot-row">
        <Plot title="Error against Δt" testid="sweep-error-dt" xLabel="Δt [s]" yLabel={yLabel} xLog yLog
          series={series((r) => r.dt, true)} guides={slopeGuides(result.rows, err)} marks={[floorMark]}
          note={<>Dashed grey: slopes 1–4; fitted orders in the legend (open circles: at the reference's own error, left out of the fit).</>} />
        <Plot title="Error against wall time" testid="sweep-error-wall" xLabel="wall time [s]" yLabel={yLabel} xLog yLog
          series={series((r) => Math.max(r.wallSeconds, 1e-4), false)} marks={[tolMark]} note={<>Wall time of each run in its worker (squares: RK4).</>} />
        <Plot title="Error against cost" testid="sweep-error-cost" xLabel="cost [tendency evaluations + matvecs]" yLabel={yLabel} xLog yLog
          series={series((r) => r.cost, false)} marks={[{ x: rk4.cost, y: null, label: "RK4 at its limit", colour: "#b00" }, tolMark]}
          note={<>Red: RK4 at its gravity-wave limit over the same time (squares: the RK4 runs).</>} />
      </div>
      <h3>Fitted orders <TableExports stem="sweep-orders" header={ORDER_COLUMNS} json={() => result.orders}
        rows={() => labels.map((l) => { const o = result.orders[l]; return [l, o.order, o.range?.[0], o.range?.[1], o.points, o.byComponent.surface, o.byComponent.thickness, o.byComponent.velocity, o.note ?? ""]; })} /></h3>
      <table className="study-table" data-testid="sweep-orders">
        <thead><tr><th>stepper</th><th>order ({comp})</th><th>on Δt</th><th>rows</th><th>surface</th><th>thickness</th><th>velocity</th></tr></thead>
        <tbody>
          {labels.map((l) => {
            const o = result.orders[l];
            const f = (v: number | null) => (v === null ? "—" : fmt(v, 3));
            return (
              <tr key={l}><td>{l}</td><td><b>{f(o.order)}</b></td><td>{o.range ? `${fmt(o.range[0])}–${fmt(o.range[1])} s` : o.note ?? "—"}</td><td>{o.points}</td>
                <td>{f(o.byComponent.surface)}</td><td>{f(o.byComponent.thickness)}</td><td>{f(o.byComponent.velocity)}</td></tr>
            );
          })}
        </tbody>
      </table>
      <h3>Runs <TableExports stem="sweep-rows" header={SWEEP_COLUMNS} rows={() => sweepCells(result.rows)} json={() => result} /></h3>
      <table className="study-table" data-testid="sweep-rows">
        <thead><tr><th>stepper</th><th>Δt [s]</th><th>× RK4</th><th>status</th><th>surface</th><th>thickness</th><th>velocity</th><th>mass drift</th><th>energy</th><th>wall [s]</th><th>cost</th></tr></thead>
        <tbody>
          {result.rows.map((r) => (
            <tr key={`${r.label}-${r.dt}`}>
              <td>{r.label}</td><td>{fmt(r.dt, 4)}</td><td>{fmt(r.dtRatioToRk4)}</td><td>{r.status}{r.atReferenceFloor ? " (floor)" : ""}</td>
              <td>{r.error.surface === null ? "—" : fmt(r.error.surface)}</td><td>{r.error.thickness === null ? "—" : fmt(r.error.thickness)}</td>
              <td>{r.error.velocity === null ? "—" : fmt(r.error.velocity)}</td><td>{fmt(r.massDrift, 2)}</td>
              <td title={r.energyDrift === null ? `budget residual: ${r.energyDriftReason ?? ""}` : "energy drift"}>{r.energyDrift !== null ? fmt(r.energyDrift, 2) : r.energyResidual !== null ? `${fmt(r.energyResidual, 2)} (res.)` : "—"}</td>
              <td>{fmt(r.wallSeconds)}</td><td>{r.cost}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}
