import { useMemo, useState } from "react";
import { schemeTableau10 } from "d3";
import type { CellOutlines } from "../../workers/protocol.js";
import type { StatisticFields, StatisticsOutcome, StatisticsRow } from "../../workers/studyPool.js";
import { fmt, formatDays } from "../format.js";
import type { Cell } from "../export.js";
import { CellMap } from "./CellMap.js";
import { Plot, type PlotSeries } from "./Plot.js";
import { TableExports } from "./ExportButtons.js";

/** The field statistics, with how to show them (the engine's names; units of the fields). */
const FIELDS: { key: keyof StatisticFields; label: string; unit: string; perLayer: boolean; scale: "diverging" | "sequential" }[] = [
  { key: "meanSurface", label: "time-mean free surface", unit: "m", perLayer: false, scale: "diverging" },
  { key: "surfaceStd", label: "free-surface standard deviation", unit: "m", perLayer: false, scale: "sequential" },
  { key: "meanThickness", label: "time-mean layer thickness", unit: "m", perLayer: true, scale: "sequential" },
  { key: "meanKineticEnergy", label: "time-mean kinetic energy per unit mass", unit: "m²/s²", perLayer: true, scale: "sequential" },
];
const ENERGY = ["meanEnergy", "meanWindPower", "meanDragLoss", "meanViscousLoss", "meanResidual"] as const;
const ALL = [...FIELDS.map((f) => f.key), ...ENERGY] as const;

export const STATISTICS_COLUMNS = ["label", "method", "dt", "dtRatioToRk4", "status", ...ALL.map((s) => `error_${s}`), ...ALL.map((s) => `withinNoise_${s}`), "wallSeconds", "rhsEvaluations", "matvecs"];

export function statisticsCells(rows: readonly StatisticsRow[]): Cell[][] {
  return rows.map((r) => [r.label, r.method, r.dt, r.dtRatioToRk4, r.status, ...ALL.map((s) => r.errors[s]), ...ALL.map((s) => r.withinNoise[s]), r.wallSeconds, r.rhsEvaluations, r.matvecs]);
}

function layerOf(a: Float64Array, nCells: number, layer: number): Float64Array {
  return a.length === nCells ? a : a.subarray(layer * nCells, (layer + 1) * nCells);
}

export function StatisticsView({ outcome, outlines, nLayers }: { outcome: StatisticsOutcome; outlines: CellOutlines; nLayers: number }) {
  const { result } = outcome;
  const [stat, setStat] = useState<keyof StatisticFields>("meanSurface");
  const [layer, setLayer] = useState(0);
  const info = FIELDS.find((f) => f.key === stat)!;
  const nc = outlines.nCells;
  const floor = result.noiseFloor[stat];
  const labels = useMemo(() => [...new Set(result.rows.map((r) => r.label))], [result]);
  // each stepper's error map at its largest Δt that completed
  const shown = useMemo(() => labels.map((l) => {
    let best = -1;
    result.rows.forEach((r, k) => { if (r.label === l && r.status === "completed" && outcome.rows[k] && (best < 0 || r.dt > result.rows[best].dt)) best = k; });
    return best;
  }).filter((k) => k >= 0), [labels, result, outcome]);
  const refField = layerOf(outcome.reference[stat], nc, layer);
  const diffs = useMemo(() => shown.map((k) => {
    const f = layerOf(outcome.rows[k]![stat], nc, layer);
    const d = new Float64Array(nc);
    for (let i = 0; i < nc; i++) d[i] = f[i] - refField[i];
    return d;
  }), [shown, stat, layer, outcome, refField]);
  const lim = Math.max(1e-300, ...diffs.map((d) => d.reduce((m, v) => Math.max(m, Math.abs(v)), 0)));
  const floorText = floor === null ? "no noise floor (an ensemble of one reference run)" : `noise floor ${fmt(floor, 2)} (largest difference between ${result.reference.ensemble} reference runs started a round-off apart)`;
  const series: PlotSeries[] = labels.map((l, i) => ({
    name: l, colour: schemeTableau10[i % 10],
    points: result.rows.filter((r) => r.label === l && r.errors[stat] !== null).sort((a, b) => a.dt - b.dt)
      .map((r) => ({ x: r.dt, y: r.errors[stat]!, marker: r.withinNoise[stat] ? "open-circle" as const : "circle" as const, title: `${l} Δt = ${fmt(r.dt)} s: ${fmt(r.errors[stat]!)}` })),
  }));
  return (
    <div className="study-result" data-testid="statistics-result">
      <p className="study-summary" data-testid="statistics-summary">
        Spin-up {formatDays(result.spinUp)}, then {result.samples} samples every {formatDays(result.sampleEvery)} over {formatDays(result.window)};
        reference {result.reference.label} at Δt = {fmt(result.reference.dt)} s, ensemble of {result.reference.ensemble}.
        For the {info.label}: <b data-testid="statistics-floor">{floorText}</b>.
      </p>
      {result.warnings.map((w) => <p key={w} className="study-warning">{w}</p>)}
      <div className="study-form">
        <label>Statistic <select data-testid="statistics-field" value={stat} onChange={(e) => setStat(e.target.value as keyof StatisticFields)}>
          {FIELDS.map((f) => <option key={f.key} value={f.key}>{f.label} [{f.unit}]</option>)}
        </select></label>
        {info.perLayer && (
          <label>Layer <select data-testid="statistics-layer" value={layer} onChange={(e) => setLayer(Number(e.target.value))}>
            {Array.from({ length: nLayers }, (_, k) => <option key={k} value={k}>{k}</option>)}
          </select></label>
        )}
      </div>
      <div className="plot-row">
        <CellMap title={`Reference: ${info.label}${info.perLayer ? `, layer ${layer}` : ""}`} testid="statistics-reference-map" outlines={outlines}
          values={refField} unit={info.unit} scale={info.scale} note={<>{result.reference.label}, member 0.</>} />
        {shown.map((k, j) => {
          const r = result.rows[k];
          const e = r.errors[stat];
          return (
            <CellMap key={k} title={`${r.label} − reference (Δt = ${fmt(r.dt)} s)`} testid={`statistics-error-map-${j}`} outlines={outlines}
              values={diffs[j]} unit={info.unit} scale="diverging" range={[-lim, lim]}
              note={<>Relative error {e === null ? "—" : fmt(e, 3)}; {floor === null ? "no floor" : `floor ${fmt(floor, 2)}: ${r.withinNoise[stat] ? "within the noise" : "above the noise"}`}.</>} />
          );
        })}
        <Plot title={`Error of the ${info.label} against Δt`} testid="statistics-error-dt" xLabel="Δt [s]" yLabel="relative error" xLog yLog series={series}
          marks={floor === null || !(floor > 0) ? [] : [{ x: null, y: floor, label: `noise floor ${fmt(floor, 2)}`, colour: "#777" }]}
          note={<>Open circles: within the noise floor (indistinguishable from the reference).</>} />
      </div>
      <h3>Runs <TableExports stem="statistics-rows" header={STATISTICS_COLUMNS} rows={() => statisticsCells(result.rows)} json={() => result} /></h3>
      <table className="study-table" data-testid="statistics-rows">
        <thead><tr><th>stepper</th><th>Δt [s]</th><th>status</th>{ALL.map((s) => <th key={s}>{s}</th>)}<th>wall [s]</th></tr></thead>
        <tbody>
          {result.rows.map((r) => (
            <tr key={`${r.label}-${r.dt}`}><td>{r.label}</td><td>{fmt(r.dt, 4)}</td><td>{r.status}</td>
              {ALL.map((s) => <td key={s}>{r.errors[s] === null ? "—" : `${fmt(r.errors[s]!, 2)}${r.withinNoise[s] ? " ✓" : ""}`}</td>)}
              <td>{fmt(r.wallSeconds)}</td></tr>
          ))}
          <tr><td colSpan={3}><i>noise floor</i></td>{ALL.map((s) => <td key={s}><i>{result.noiseFloor[s] === null ? "—" : fmt(result.noiseFloor[s]!, 2)}</i></td>)}<td /></tr>
        </tbody>
      </table>
    </div>
  );
}
