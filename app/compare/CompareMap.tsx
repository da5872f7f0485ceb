import { memo, useEffect, useRef } from "react";
import type { CellOutlines } from "../../workers/protocol.js";
import { cellPath, coastPath, type MapRaster } from "../map/raster.js";
import { DIVERGING, LAND, NO_VALUE, PALETTE_SIZE, SEQUENTIAL } from "../map/palette.js";

interface CompareMapProps {
  readonly outlines: CellOutlines;
  readonly raster: MapRaster;
  readonly width: number;
  readonly height: number;
  /** Values per cell, or null before the first frame. */
  readonly values: Float32Array | null;
  /** The colour range [lo, hi] (shared by the steppers' maps; symmetric for the difference). */
  readonly domain: [number, number];
  readonly scale: "diverging" | "sequential";
  /** A cell to mark (where a stepper failed), or −1. */
  readonly marked: number;
  /** Changes whenever `values` were refilled. */
  readonly version: number;
  readonly testid: string;
}

/** One small map of the compare view: the raster lookup shared by all maps, painted with a given colour range. */
export const CompareMap = memo(function CompareMap(p: CompareMapProps) {
  const canvas = useRef<HTMLCanvasElement>(null);
  const work = useRef<{ img: ImageData; colour: Uint32Array } | null>(null);
  useEffect(() => {
    const c = canvas.current;
    if (!c) return;
    const id = requestAnimationFrame(() => {
      const r = p.raster;
      if (!work.current || work.current.img.width !== r.width || work.current.img.height !== r.height) {
        work.current = { img: new ImageData(r.width, r.height), colour: new Uint32Array(p.outlines.nCells) };
      }
      const { img, colour } = work.current;
      const px = new Uint32Array(img.data.buffer);
      const v = p.values;
      const table = p.scale === "diverging" ? DIVERGING : SEQUENTIAL;
      const [lo, hi] = p.domain;
      const k = (PALETTE_SIZE - 1) / (hi - lo || 1);
      if (v && v.length === p.outlines.nCells) {
        for (let i = 0; i < v.length; i++) {
          const t = Math.round((v[i] - lo) * k);
          colour[i] = t >= 0 && t < PALETTE_SIZE ? table[t] : t >= PALETTE_SIZE ? table[PALETTE_SIZE - 1] : t < 0 ? table[0] : NO_VALUE;
        }
      } else colour.fill(NO_VALUE);
      const at = r.cellAt;
      for (let q = 0; q < at.length; q++) px[q] = at[q] >= 0 ? colour[at[q]] : LAND;
      const ctx = c.getContext("2d")!;
      ctx.putImageData(img, 0, 0);
      if (p.outlines.coast.length) { ctx.strokeStyle = "#2b2b2b"; ctx.lineWidth = 1; ctx.stroke(coastPath(p.outlines, r)); }
      if (p.marked >= 0 && p.marked < p.outlines.nCells) {
        ctx.fillStyle = "rgba(255,0,255,0.85)";
        ctx.fill(cellPath(p.outlines, r, p.marked));
        const [cx, cy] = r.toPixel(p.outlines.cellX[p.marked], p.outlines.cellY[p.marked]);
        ctx.strokeStyle = "#ff00ff";
        ctx.lineWidth = 3;
        ctx.beginPath();
        ctx.arc(cx, cy, 12, 0, 2 * Math.PI);
        ctx.stroke();
      }
      c.dataset.draws = String(Number(c.dataset.draws ?? 0) + 1);
    });
    return () => cancelAnimationFrame(id);
  }, [p.version, p.domain[0], p.domain[1], p.marked, p.raster, p.scale]);
  return <canvas ref={canvas} width={p.raster.width} height={p.raster.height} style={{ width: p.width, height: p.height }} data-testid={p.testid} />;
});
