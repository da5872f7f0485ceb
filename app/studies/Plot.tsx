import { useMemo, useRef, type ReactNode } from "react";
import { scaleLinear, scaleLog, type ScaleLinear, type ScaleLogarithmic } from "d3";
import { fmt } from "../format.js";
import { ExportButtons } from "./ExportButtons.js";

/**
 * A scatter/line plot with linear or logarithmic axes, drawn with d3 scales as plain SVG. Every look is an SVG
 * attribute (no style sheet), so the exported file is the figure as shown. The legend is part of the SVG.
 */
export type Marker = "circle" | "open-circle" | "cross" | "square";

export interface PlotPoint { x: number; y: number; marker?: Marker; title?: string }
export interface PlotSeries { name: string; colour: string; points: PlotPoint[]; line?: boolean; dashed?: boolean; width?: number }
export interface RefLine { x: number | null; y: number | null; label: string; colour?: string }

export interface PlotProps {
  title: string;
  testid: string;
  xLabel: string;
  yLabel: string;
  xLog?: boolean;
  yLog?: boolean;
  series: PlotSeries[];
  /** Straight guide lines (e.g. reference slopes), drawn dashed in grey and clipped to the plot. */
  guides?: { label: string; points: [number, number][] }[];
  /** Vertical (x set) or horizontal (y set) marker lines. */
  marks?: RefLine[];
  /** Extra domain to include (so guides or marks stay in view). */
  include?: { x?: number[]; y?: number[] };
  note?: ReactNode;
  width?: number;
  height?: number;
}

const M = { l: 70, r: 16, t: 26, b: 44 };
const LEGEND_W = 190;
const FONT = "system-ui, sans-serif";

type Scale = ScaleLinear<number, number> | ScaleLogarithmic<number, number>;

function domain(values: number[], log: boolean): [number, number] {
  const v = values.filter((x) => Number.isFinite(x) && (!log || x > 0));
  if (!v.length) return log ? [1e-3, 1] : [0, 1];
  let lo = Math.min(...v);
  let hi = Math.max(...v);
  if (log) {
    if (hi / lo < 10) { const c = Math.sqrt(lo * hi); lo = c / 4; hi = c * 4; }
    return [lo / 1.4, hi * 1.4];
  }
  if (hi - lo < 1e-300) { lo -= 1; hi += 1; }
  const pad = 0.06 * (hi - lo);
  return [lo - pad, hi + pad];
}

function ticksOf(s: Scale, log: boolean): number[] {
  if (!log) return (s as ScaleLinear<number, number>).ticks(5);
  const [a, b] = s.domain();
  const out: number[] = [];
  for (let e = Math.floor(Math.log10(a)); e <= Math.ceil(Math.log10(b)); e++) {
    const t = 10 ** e;
    if (t >= a && t <= b) out.push(t);
  }
  if (out.length < 2) {
    // less than two decades: 1, 2 and 5 times powers of ten (d3's own log ticks label every integer multiple)
    const t = (s as ScaleLogarithmic<number, number>).ticks(4).filter((v) => [1, 2, 5].includes(Math.round(v / 10 ** Math.floor(Math.log10(v) + 1e-9))));
    return t.length >= 2 ? t : (s as ScaleLogarithmic<number, number>).ticks(4);
  }
  const every = Math.ceil(out.length / 7);
  return out.filter((_, i) => i % every === 0);
}

function MarkerShape({ m, x, y, c }: { m: Marker; x: number; y: number; c: string }) {
  switch (m) {
    case "cross": return <path d={`M${x - 5},${y - 5}L${x + 5},${y + 5}M${x - 5},${y + 5}L${x + 5},${y - 5}`} stroke={c} strokeWidth={2} fill="none" />;
    case "square": return <rect x={x - 4.5} y={y - 4.5} width={9} height={9} fill={c} stroke="#222" strokeWidth={0.8} />;
    case "open-circle": return <circle cx={x} cy={y} r={4.5} fill="#ffffff" stroke={c} strokeWidth={1.8} />;
    default: return <circle cx={x} cy={y} r={4.2} fill={c} stroke="#222" strokeWidth={0.6} />;
  }
}

export function Plot(p: PlotProps) {
  const ref = useRef<SVGSVGElement>(null);
  const W = p.width ?? 560;
  const H = p.height ?? 320;
  const plotR = W - LEGEND_W;
  const g = useMemo(() => {
    const xs = [...p.series.flatMap((s) => s.points.map((q) => q.x)), ...(p.include?.x ?? []), ...(p.marks ?? []).flatMap((m) => (m.x !== null ? [m.x] : []))];
    const ys = [...p.series.flatMap((s) => s.points.map((q) => q.y)), ...(p.include?.y ?? []), ...(p.marks ?? []).flatMap((m) => (m.y !== null ? [m.y] : []))];
    const x: Scale = (p.xLog ? scaleLog() : scaleLinear()).domain(domain(xs, !!p.xLog)).range([M.l, plotR - M.r]);
    const y: Scale = (p.yLog ? scaleLog() : scaleLinear()).domain(domain(ys, !!p.yLog)).range([H - M.b, M.t]);
    return { x, y, xt: ticksOf(x, !!p.xLog), yt: ticksOf(y, !!p.yLog) };
  }, [p.series, p.include, p.marks, p.xLog, p.yLog, W, H]);
  const ok = (q: { x: number; y: number }) => Number.isFinite(q.x) && Number.isFinite(q.y) && (!p.xLog || q.x > 0) && (!p.yLog || q.y > 0);
  const clip = `clip-${p.testid}`;
  const [x0, x1] = g.x.range();
  const [y1, y0] = g.y.range();
  return (
    <figure className="study-plot">
      <svg ref={ref} width={W} height={H} data-testid={p.testid} role="img" aria-label={p.title} fontFamily={FONT}
        data-series={p.series.length} data-points={p.series.reduce((a, s) => a + s.points.filter(ok).length, 0)}>
        <defs><clipPath id={clip}><rect x={x0} y={y0} width={x1 - x0} height={y1 - y0} /></clipPath></defs>
        <text x={M.l} y={16} fontSize={13} fontWeight={600} fill="#222">{p.title}</text>
        <rect x={x0} y={y0} width={x1 - x0} height={y1 - y0} fill="#fafafa" stroke="#999" strokeWidth={1} />
        <g data-axis="x">
          {g.xt.map((t) => (
            <g key={`x${t}`}>
              <line x1={g.x(t)} x2={g.x(t)} y1={y0} y2={y1} stroke="#e3e3e3" strokeWidth={1} />
              <line x1={g.x(t)} x2={g.x(t)} y1={y1} y2={y1 + 4} stroke="#555" strokeWidth={1} />
              <text x={g.x(t)} y={y1 + 16} textAnchor="middle" fontSize={11} fill="#333">{fmt(t, 3)}</text>
            </g>
          ))}
          <text x={(x0 + x1) / 2} y={H - 8} textAnchor="middle" fontSize={12} fill="#222" data-label="x">{p.xLabel}</text>
        </g>
        <g data-axis="y">
          {g.yt.map((t) => (
            <g key={`y${t}`}>
              <line x1={x0} x2={x1} y1={g.y(t)} y2={g.y(t)} stroke="#e3e3e3" strokeWidth={1} />
              <line x1={x0 - 4} x2={x0} y1={g.y(t)} y2={g.y(t)} stroke="#555" strokeWidth={1} />
              <text x={x0 - 6} y={g.y(t) + 4} textAnchor="end" fontSize={11} fill="#333">{fmt(t, 2)}</text>
            </g>
          ))}
          <text transform={`translate(14,${(y0 + y1) / 2}) rotate(-90)`} textAnchor="middle" fontSize={12} fill="#222" data-label="y">{p.yLabel}</text>
        </g>
        <g clipPath={`url(#${clip})`}>
          {(p.guides ?? []).map((gd) => {
            const pts = gd.points.filter(([a, b]) => ok({ x: a, y: b }));
            if (pts.length < 2) return null;
            const last = pts[0];
            return (
              <g key={gd.label} data-guide={gd.label}>
                <path d={`M${pts.map(([a, b]) => `${g.x(a)},${g.y(b)}`).join("L")}`} stroke="#8a8a8a" strokeWidth={1} strokeDasharray="5 4" fill="none" />
                <text x={g.x(last[0]) + 4} y={g.y(last[1]) - 4} fontSize={10} fill="#666">{gd.label}</text>
              </g>
            );
          })}
          {(p.marks ?? []).map((m) => m.x !== null ? (
            <g key={m.label}>
              <line x1={g.x(m.x)} x2={g.x(m.x)} y1={y0} y2={y1} stroke={m.colour ?? "#b00"} strokeWidth={1.4} strokeDasharray="6 3" />
              <text x={g.x(m.x) + 4} y={y0 + 12} fontSize={10} fill={m.colour ?? "#b00"}>{m.label}</text>
            </g>
          ) : m.y !== null ? (
            <g key={m.label}>
              <line x1={x0} x2={x1} y1={g.y(m.y)} y2={g.y(m.y)} stroke={m.colour ?? "#b00"} strokeWidth={1.4} strokeDasharray="6 3" />
              <text x={x0 + 4} y={g.y(m.y) - 4} fontSize={10} fill={m.colour ?? "#b00"}>{m.label}</text>
            </g>
          ) : null)}
          {p.series.map((s) => {
            const pts = s.points.filter(ok);
            return (
              <g key={s.name} data-series={s.name}>
                {s.line !== false && pts.length > 1 && (
                  <path d={`M${pts.map((q) => `${g.x(q.x)},${g.y(q.y)}`).join("L")}`} stroke={s.colour} strokeWidth={s.width ?? 1.6} fill="none"
                    strokeDasharray={s.dashed ? "4 3" : undefined} />
                )}
                {pts.map((q, i) => (
                  <g key={i}>
                    <MarkerShape m={q.marker ?? "circle"} x={g.x(q.x)} y={g.y(q.y)} c={s.colour} />
                    {q.title && <title>{q.title}</title>}
                  </g>
                ))}
              </g>
            );
          })}
        </g>
        <g data-legend="">
          {p.series.map((s, i) => (
            <g key={s.name} transform={`translate(${plotR + 4},${M.t + 8 + i * 18})`}>
              <line x1={0} x2={18} y1={0} y2={0} stroke={s.colour} strokeWidth={2} strokeDasharray={s.dashed ? "4 3" : undefined} />
              <MarkerShape m={s.points[0]?.marker === "square" ? "square" : "circle"} x={9} y={0} c={s.colour} />
              <text x={24} y={4} fontSize={11} fill="#222">{s.name.length > 28 ? `${s.name.slice(0, 27)}…` : s.name}</text>
            </g>
          ))}
        </g>
      </svg>
      <figcaption>
        {p.note}
        <ExportButtons stem={p.testid} svg={() => ref.current} />
      </figcaption>
    </figure>
  );
}
