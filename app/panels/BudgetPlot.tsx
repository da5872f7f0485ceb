import { memo, useMemo } from "react";
import { extent, line, scaleLinear, scaleLog } from "d3";
import type { BudgetSample } from "../drift.js";
import { fmt } from "../format.js";

/**
 * The energy budget of the run as time series: the change of total energy, the wind's work, the drag and viscous
 * losses (cumulative since the start, m⁵ s⁻²; × ρ0 gives joules), and the residual — the energy the time stepper
 * itself creates or destroys — on its own log axis.
 */
const W = 440;
const H = 120;
const M = { l: 64, r: 10, t: 10, b: 28 };
/** Smallest |residual| drawn on the log axis [m⁵ s⁻²]. */
const FLOOR = 1e-30;

export interface LineSeries { name: string; colour: string; y: number[]; dash?: string }

/** A small SVG line plot against simulated days; `log` plots |y| on a log axis. */
export function SeriesPlot({ title, testid, days, series, log, unit, height = H }: {
  title: string; testid: string; days: number[]; series: LineSeries[]; log: boolean; unit: string; height?: number;
}) {
  const geom = useMemo(() => {
    const x = scaleLinear().domain(days.length > 1 ? (extent(days) as [number, number]) : [0, 1]).range([M.l, W - M.r]);
    // on a log axis an exact zero (the start) is left out rather than drawn at an arbitrary floor
    const values = series.flatMap((s) => s.y).filter((v) => Number.isFinite(v) && (!log || v !== 0)).map((v) => (log ? Math.max(Math.abs(v), FLOOR) : v));
    let [lo, hi] = values.length ? (extent(values) as [number, number]) : [log ? 1e-20 : 0, 1];
    if (log) { lo = Math.max(FLOOR, lo); hi = Math.max(hi, lo * 10); } else if (hi - lo < 1e-300) { lo -= 1; hi += 1; }
    const y = log ? scaleLog().domain([lo, hi]).range([height - M.b, M.t]).nice() : scaleLinear().domain([lo, hi]).range([height - M.b, M.t]).nice();
    const path = line<number>().defined((v) => Number.isFinite(v) && (!log || v !== 0)).x((_, j) => x(days[j])).y((v) => y(log ? Math.max(Math.abs(v), FLOOR) : v));
    const ticks = log ? y.ticks(4).filter((_, i, a) => a.length <= 5 || i % Math.ceil(a.length / 5) === 0) : y.ticks(4);
    return {
      paths: series.map((s) => ({ name: s.name, colour: s.colour, dash: s.dash, d: path(s.y) ?? "" })),
      xTicks: x.ticks(5).map((t) => ({ t, px: x(t) })),
      yTicks: ticks.map((t) => ({ t, py: y(t) })),
    };
  }, [days, series, log, height]);
  return (
    <figure className="plot">
      <figcaption>{title}</figcaption>
      <svg width={W} height={height} data-testid={testid} data-points={days.length} role="img" aria-label={title}>
        <rect x={M.l} y={M.t} width={W - M.l - M.r} height={height - M.t - M.b} className="plot-bg" />
        {geom.yTicks.map(({ t, py }) => (
          <g key={`y${t}`}>
            <line x1={M.l} x2={W - M.r} y1={py} y2={py} className="grid" />
            <text x={M.l - 4} y={py + 4} textAnchor="end" className="tick">{fmt(t, 2)}</text>
          </g>
        ))}
        {geom.xTicks.map(({ t, px }) => <text key={`x${t}`} x={px} y={height - M.b + 16} textAnchor="middle" className="tick">{fmt(t, 3)}</text>)}
        <text x={M.l} y={height - 2} className="tick">{unit}</text>
        <text x={W - M.r} y={height - 2} textAnchor="end" className="tick">simulated days</text>
        {geom.paths.map((p) => <path key={p.name} d={p.d} fill="none" stroke={p.colour} strokeWidth={1.8} strokeDasharray={p.dash} />)}
      </svg>
      {series.length > 1 && <div className="legend">{series.map((s) => <span key={s.name}><i style={{ background: s.colour }} />{s.name}</span>)}</div>}
    </figure>
  );
}

export const BudgetPlot = memo(function BudgetPlot({ samples }: { samples: readonly BudgetSample[] }) {
  const d = useMemo(() => {
    const rows = samples.filter((s) => s.energyBudget);
    const days = rows.map((s) => s.time / 86400);
    const b = rows.map((s) => s.energyBudget!);
    const terms: LineSeries[] = [
      { name: "energy change", colour: "#1f4e99", y: b.map((x) => x.change) },
      { name: "wind work", colour: "#2a9d4b", y: b.map((x) => x.windWork) },
      { name: "drag loss", colour: "#c07a12", y: b.map((x) => x.dragLoss), dash: "5 3" },
      { name: "viscous loss", colour: "#8a3ea8", y: b.map((x) => x.viscousLoss), dash: "2 2" },
    ];
    const residual: LineSeries[] = [{ name: "|residual|", colour: "#c0262d", y: b.map((x) => x.residual) }];
    const last = b[b.length - 1];
    const scale = last ? Math.max(Math.abs(last.change), Math.abs(last.windWork), Math.abs(last.dragLoss), Math.abs(last.viscousLoss)) : 0;
    return { days, terms, residual, last, relative: last && scale > 0 ? Math.abs(last.residual) / scale : null };
  }, [samples]);
  return (
    <div className="budget-plot" data-testid="budget-plot" data-points={d.days.length}>
      <SeriesPlot title="Energy budget since the start (cumulative)" testid="budget-terms-plot" days={d.days} series={d.terms} log={false} unit="m⁵/s²" />
      <SeriesPlot title="Budget residual: energy the stepper creates or destroys, |change − (wind − drag − viscous)|, log scale"
        testid="energy-plot" days={d.days} series={d.residual} log unit="m⁵/s²" height={100} />
      <p className="budget-summary" data-testid="budget-summary">
        {d.last
          ? <>residual {fmt(d.last.residual)} m⁵/s²{d.relative !== null ? <> · {fmt(d.relative, 2)} of the largest budget term</> : " · no forcing or loss yet"}</>
          : "no budget yet"}
      </p>
    </div>
  );
});
