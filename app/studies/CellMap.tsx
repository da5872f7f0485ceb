import { useMemo, useRef } from "react";
import type { CellOutlines } from "../../workers/protocol.js";
import { buildRaster, mapFrame } from "../map/raster.js";
import { colourDomain, DIVERGING, LAND, NO_VALUE, PALETTE_SIZE, SEQUENTIAL, divergingColour, sequentialColour } from "../map/palette.js";
import { fmt } from "../format.js";
import { ExportButtons } from "./ExportButtons.js";

/**
 * A field on the mesh as a figure: the cells rasterised once (as the run view's map does) into an image placed in
 * an SVG with a title, a frame in km and a colour bar with units, so that it exports as SVG and PNG like the plots.
 */
export interface CellMapProps {
  title: string;
  testid: string;
  outlines: CellOutlines;
  values: ArrayLike<number>;
  unit: string;
  scale: "diverging" | "sequential";
  /** Colour range; default the values' own (symmetric about zero when diverging). */
  range?: [number, number];
  note?: React.ReactNode;
  maxWidth?: number;
  maxHeight?: number;
}

const M = { l: 8, t: 24, r: 96, b: 22 };

export function CellMap(p: CellMapProps) {
  const ref = useRef<SVGSVGElement>(null);
  const frame = useMemo(() => mapFrame(p.outlines, p.maxWidth ?? 300, p.maxHeight ?? 260), [p.outlines, p.maxWidth, p.maxHeight]);
  const { href, lo, hi, min, max } = useMemo(() => {
    let min = Infinity; let max = -Infinity;
    for (let i = 0; i < p.values.length; i++) { const v = p.values[i]; if (Number.isFinite(v)) { if (v < min) min = v; if (v > max) max = v; } }
    const [lo, hi] = p.range ?? colourDomain(p.scale, min, max);
    const raster = buildRaster(p.outlines, frame.width, frame.height, frame.scale);
    const table = p.scale === "diverging" ? DIVERGING : SEQUENTIAL;
    const canvas = document.createElement("canvas");
    canvas.width = raster.width;
    canvas.height = raster.height;
    const ctx = canvas.getContext("2d")!;
    const img = ctx.createImageData(raster.width, raster.height);
    const px = new Uint32Array(img.data.buffer);
    const k = (PALETTE_SIZE - 1) / (hi - lo);
    for (let q = 0; q < raster.cellAt.length; q++) {
      const c = raster.cellAt[q];
      if (c < 0) { px[q] = LAND; continue; }
      const v = p.values[c];
      if (!Number.isFinite(v)) { px[q] = NO_VALUE; continue; }
      px[q] = table[Math.min(PALETTE_SIZE - 1, Math.max(0, Math.round((v - lo) * k)))];
    }
    ctx.putImageData(img, 0, 0);
    return { href: canvas.toDataURL("image/png"), lo, hi, min, max };
  }, [p.values, p.outlines, p.scale, p.range, frame]);
  const W = M.l + frame.width + M.r;
  const H = M.t + frame.height + M.b;
  const colour = p.scale === "diverging" ? divergingColour : sequentialColour;
  const grad = `grad-${p.testid}`;
  const barX = M.l + frame.width + 12;
  return (
    <figure className="study-plot">
      <svg ref={ref} width={W} height={H} data-testid={p.testid} role="img" aria-label={p.title} fontFamily="system-ui, sans-serif"
        data-min={min} data-max={max}>
        <defs>
          <linearGradient id={grad} x1="0" y1="0" x2="0" y2="1">
            {Array.from({ length: 17 }, (_, i) => <stop key={i} offset={`${(100 * i) / 16}%`} stopColor={colour(1 - i / 16)} />)}
          </linearGradient>
        </defs>
        <text x={M.l} y={16} fontSize={12} fontWeight={600} fill="#222">{p.title}</text>
        <image href={href} x={M.l} y={M.t} width={frame.width} height={frame.height} preserveAspectRatio="none" style={{ imageRendering: "pixelated" }} />
        <rect x={M.l} y={M.t} width={frame.width} height={frame.height} fill="none" stroke="#777" strokeWidth={1} />
        <text x={M.l} y={H - 6} fontSize={10} fill="#444" data-axis="x">
          {fmt((p.outlines.xMax - p.outlines.xMin) / 1000, 4)} km × {fmt((p.outlines.yMax - p.outlines.yMin) / 1000, 4)} km
        </text>
        <rect x={barX} y={M.t} width={14} height={frame.height} fill={`url(#${grad})`} stroke="#444" strokeWidth={0.8} />
        <text x={barX + 18} y={M.t + 9} fontSize={10} fill="#222">{fmt(hi, 3)}</text>
        <text x={barX + 18} y={M.t + frame.height} fontSize={10} fill="#222">{fmt(lo, 3)}</text>
        <text x={barX + 18} y={M.t + frame.height / 2 + 4} fontSize={10} fill="#222" data-axis="unit">[{p.unit}]</text>
      </svg>
      <figcaption>
        <span>{p.note} Range {fmt(min, 3)} … {fmt(max, 3)} {p.unit}.</span>
        <ExportButtons stem={p.testid} svg={() => ref.current} />
      </figcaption>
    </figure>
  );
}
