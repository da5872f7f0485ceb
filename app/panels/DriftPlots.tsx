import { memo, useMemo } from "react";
import { extent, line, scaleLinear, scaleLog, schemeTableau10 } from "d3";
import type { CourantNumbers } from "../../workers/protocol.js";
import { driftSeries, type BudgetSample } from "../drift.js";
import { fmt } from "../format.js";
import { BudgetPlot } from "./BudgetPlot.js";

interface DriftPlotsProps {
  readonly samples: readonly BudgetSample[];
  readonly layerNames: readonly string[];
  readonly logScale: boolean;
  readonly onLogScale: (log: boolean) => void;
  readonly courant: CourantNumbers | null;
  readonly dt: number;
}

const W = 440;
const H = 110;
const M = { l: 64, r: 10, t: 10, b: 28 };
/** Smallest |drift| shown on the log scale (below double-precision round-off of a relative quantity). */
const FLOOR = 1e-17;

interface Series { name: string; colour: string; y: number[] }

function Plot({ title, testid, days, series, logScale }: { title: string; testid: string; days: number[]; series: Series[]; logScale: boolean }) {
  const geom = useMemo(() => {
    const x = scaleLinear().domain(days.length > 1 ? (extent(days) as [number, number]) : [0, 1]).range([M.l, W - M.r]);
    const values = series.flatMap((s) => s.y).map((v) => (logScale ? Math.max(Math.abs(v), FLOOR) : v));
    let [lo, hi] = values.length ? (extent(values) as [number, number]) : [0, 1];
    if (logScale) { lo = Math.max(FLOOR, lo); hi = Math.max(hi, lo * 10); } else if (hi - lo < 1e-300) { lo -= 1e-16; hi += 1e-16; }
    const y = logScale ? scaleLog().domain([lo, hi]).range([H - M.b, M.t]).nice() : scaleLinear().domain([lo, hi]).range([H - M.b, M.t]).nice();
    const path = line<number>().x((_, j) => x(days[j])).y((v) => y(logScale ? Math.max(Math.abs(v), FLOOR) : v));
    return {
      paths: series.map((s) => ({ name: s.name, colour: s.colour, d: path(s.y) ?? "" })),
      xTicks: x.ticks(5).map((t) => ({ t, px: x(t) })),
      yTicks: (logScale ? y.ticks(4).filter((_, i, a) => a.length <= 5 || i % Math.ceil(a.length / 5) === 0) : y.ticks(4)).map((t) => ({ t, py: y(t) })),
    };
  }, [days, series, logScale]);
  return (
    <figure className="plot">
      <figcaption>{title}</figcaption>
      <svg width={W} height={H} data-testid={testid} data-points={days.length} role="img" aria-label={title}>
        <rect x={M.l} y={M.t} width={W - M.l - M.r} height={H - M.t - M.b} className="plot-bg" />
        {geom.yTicks.map(({ t, py }) => (
          <g key={`y${t}`}>
            <line x1={M.l} x2={W - M.r} y1={py} y2={py} className="grid" />
            <text x={M.l - 4} y={py + 4} textAnchor="end" className="tick">{fmt(t, 2)}</text>
          </g>
        ))}
        {geom.xTicks.map(({ t, px }) => (
          <text key={`x${t}`} x={px} y={H - M.b + 16} textAnchor="middle" className="tick">{fmt(t, 3)}</text>
        ))}
        <text x={W - M.r} y={H - 2} textAnchor="end" className="tick">simulated days</text>
        {geom.paths.map((p) => <path key={p.name} d={p.d} fill="none" stroke={p.colour} strokeWidth={1.8} />)}
      </svg>
      {series.length > 1 && (
        <div className="legend">{series.map((s) => <span key={s.name}><i style={{ background: s.colour }} />{s.name}</span>)}</div>
      )}
    </figure>
  );
}

/** Relative energy and per-layer mass drift against simulated time, and the Courant numbers of the current Δt. */
export const DriftPlots = memo(function DriftPlots({ samples, layerNames, logScale, onLogScale, courant, dt }: DriftPlotsProps) {
  const d = useMemo(() => driftSeries(samples), [samples]);
  const mass = useMemo(() => d.mass.map((y, k) => ({ name: `layer ${k}${layerNames[k] ? ` ${layerNames[k]}` : ""}`, colour: schemeTableau10[k % 10], y })), [d, layerNames]);
  const scaleWord = logScale ? "|relative drift|, log scale" : "relative drift";
  return (
    <section className="card" aria-label="Drift" data-testid="drift-panel">
      <div className="card-head">
        <h2>Conservation</h2>
        <label className="toggle">
          <input type="checkbox" data-testid="log-toggle" checked={logScale} onChange={(e) => onLogScale(e.target.checked)} /> log scale
        </label>
      </div>
      <BudgetPlot samples={samples} />
      <Plot title={`Layer volume: ${scaleWord}`} testid="mass-plot" days={d.days} series={mass} logScale={logScale} />
      <p className="courant" data-testid="courant">
        Courant numbers at Δt = {fmt(dt)} s:{" "}
        {courant ? <>fast wave <b>{fmt(courant.barotropic)}</b> · slow wave <b>{fmt(courant.baroclinic)}</b> · flow <b>{fmt(courant.advection)}</b></> : "—"}
      </p>
    </section>
  );
});
