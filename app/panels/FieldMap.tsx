import { memo, useEffect, useMemo, useRef, useState } from "react";
import type { CellOutlines, FieldInfo, MapView, Snapshot, UnstableInfo } from "../../workers/protocol.js";
import { fmt, km } from "../format.js";
import { buildRaster, cellPath, coastPath, mapFrame, type MapRaster } from "../map/raster.js";
import { colourDomain, DIVERGING, LAND, NO_VALUE, PALETTE_SIZE, SEQUENTIAL } from "../map/palette.js";
import { mapPerf } from "../perf.js";
import { ColourBar } from "./ColourBar.js";

interface FieldMapProps {
  readonly outlines: CellOutlines;
  readonly fields: readonly FieldInfo[];
  readonly nLayers: number;
  readonly layerNames: readonly string[];
  readonly view: MapView;
  readonly onView: (v: MapView) => void;
  /** Reads the latest snapshot; `snapshotVersion` changes whenever there is a new one. */
  readonly getSnapshot: () => Snapshot | null;
  readonly snapshotVersion: number;
  readonly subscribeSnapshot: (f: () => void) => () => void;
  readonly unstable: UnstableInfo | null;
  readonly maxWidth: number;
  readonly maxHeight: number;
  /** Colour scale held at [lo, hi] (null or absent: it follows the field). */
  readonly colourRange?: readonly [number, number] | null;
  /** Click on a cell (the inspector), and the cell it keeps outlined. */
  readonly onPick?: (cell: number) => void;
  readonly pinned?: number | null;
}

interface Hover { cell: number; x: number; y: number; px: number; py: number }

/** Per-cell colours into `cellColour`, then one pass over the pixel → cell raster. */
function paint(img: ImageData, raster: MapRaster, snap: Snapshot, info: FieldInfo, cellColour: Uint32Array, fixed?: readonly [number, number] | null): void {
  const table = info.scale === "diverging" ? DIVERGING : SEQUENTIAL;
  const [lo, hi] = fixed ?? colourDomain(info.scale, snap.min, snap.max);
  const k = (PALETTE_SIZE - 1) / (hi - lo);
  const v = snap.values;
  for (let i = 0; i < v.length; i++) {
    const t = Math.round((v[i] - lo) * k);
    cellColour[i] = t >= 0 && t < PALETTE_SIZE ? table[t] : t >= PALETTE_SIZE ? table[PALETTE_SIZE - 1] : t < 0 ? table[0] : NO_VALUE;
  }
  const px = new Uint32Array(img.data.buffer);
  const at = raster.cellAt;
  for (let p = 0; p < at.length; p++) {
    const c = at[p];
    px[p] = c >= 0 ? cellColour[c] : LAND;
  }
}

export const FieldMap = memo(function FieldMap(p: FieldMapProps) {
  const canvasRef = useRef<HTMLCanvasElement>(null);
  const [hover, setHover] = useState<Hover | null>(null);
  const info = p.fields.find((f) => f.kind === p.view.kind) ?? p.fields[0];
  // the canvas holds device pixels (up to 2 per CSS pixel) so hexagons stay sharp on dense screens
  const dpr = Math.min(2, Math.max(1, Math.round(window.devicePixelRatio || 1)));
  const frame = useMemo(() => mapFrame(p.outlines, p.maxWidth, p.maxHeight), [p.outlines, p.maxWidth, p.maxHeight]);
  const raster = useMemo(() => {
    const t0 = performance.now();
    const r = buildRaster(p.outlines, frame.width * dpr, frame.height * dpr, frame.scale * dpr);
    mapPerf.rasterMs = performance.now() - t0;
    return r;
  }, [p.outlines, frame, dpr]);
  const coast = useMemo(() => coastPath(p.outlines, raster), [p.outlines, raster]);
  const work = useMemo(() => ({
    img: new ImageData(raster.width, raster.height),
    cellColour: new Uint32Array(p.outlines.nCells),
  }), [raster, p.outlines]);
  const marked = p.unstable ? p.unstable.cell : -1;
  const markPath = useMemo(() => (marked >= 0 && marked < p.outlines.nCells ? cellPath(p.outlines, raster, marked) : null), [marked, raster, p.outlines]);
  const hoverPath = useMemo(() => (hover ? cellPath(p.outlines, raster, hover.cell) : null), [hover?.cell, raster, p.outlines]);
  const pinned = p.pinned ?? -1;
  const pinPath = useMemo(() => (pinned >= 0 && pinned < p.outlines.nCells ? cellPath(p.outlines, raster, pinned) : null), [pinned, raster, p.outlines]);

  // redraw once per display frame at most, whenever a snapshot, the marks or the geometry change
  const pending = useRef(0);
  const drawRef = useRef<() => void>(() => undefined);
  drawRef.current = () => {
      const canvas = canvasRef.current;
      const snap = p.getSnapshot();
      if (!canvas || !snap || snap.values.length !== p.outlines.nCells) return;
      const t0 = performance.now();
      const ctx = canvas.getContext("2d")!;
      paint(work.img, raster, snap, info, work.cellColour, p.colourRange);
      ctx.putImageData(work.img, 0, 0);
      if (p.outlines.coast.length) {
        ctx.strokeStyle = "#2b2b2b";
        ctx.lineWidth = 1.5 * dpr;
        ctx.stroke(coast);
      }
      if (hoverPath) {
        ctx.strokeStyle = "#000";
        ctx.lineWidth = 2 * dpr;
        ctx.stroke(hoverPath);
      }
      if (pinPath) {
        ctx.strokeStyle = "#ffffff";
        ctx.lineWidth = 4 * dpr;
        ctx.stroke(pinPath);
        ctx.strokeStyle = "#e05000";
        ctx.lineWidth = 2.5 * dpr;
        ctx.stroke(pinPath);
      }
      if (markPath) {
        ctx.fillStyle = "rgba(255,0,255,0.85)";
        ctx.fill(markPath);
        const [cx, cy] = raster.toPixel(p.outlines.cellX[marked], p.outlines.cellY[marked]);
        ctx.strokeStyle = "#ff00ff";
        ctx.lineWidth = 3 * dpr;
        ctx.beginPath();
        ctx.arc(cx, cy, 14 * dpr, 0, 2 * Math.PI);
        ctx.stroke();
      }
      const ms = performance.now() - t0;
      mapPerf.draws++;
      mapPerf.drawMsTotal += ms;
      mapPerf.drawMsMax = Math.max(mapPerf.drawMsMax, ms);
      canvas.dataset.draws = String(mapPerf.draws);
  };
  const requestDraw = () => {
    if (pending.current) return;
    pending.current = requestAnimationFrame(() => { pending.current = 0; drawRef.current(); });
  };
  useEffect(() => p.subscribeSnapshot(requestDraw), [p.subscribeSnapshot]);
  useEffect(requestDraw, [raster, coast, hoverPath, markPath, info, work, pinPath, p.colourRange]);
  useEffect(() => () => { cancelAnimationFrame(pending.current); pending.current = 0; }, []);

  const cellAtEvent = (ev: React.MouseEvent<HTMLCanvasElement>) => {
    const r = ev.currentTarget.getBoundingClientRect();
    const cx = Math.floor(((ev.clientX - r.left) * raster.width) / r.width);
    const cy = Math.floor(((ev.clientY - r.top) * raster.height) / r.height);
    return { r, cell: cx >= 0 && cy >= 0 && cx < raster.width && cy < raster.height ? raster.cellAt[cy * raster.width + cx] : -1 };
  };
  const onMove = (ev: React.MouseEvent<HTMLCanvasElement>) => {
    const { r, cell } = cellAtEvent(ev);
    if (cell < 0) { setHover(null); return; }
    setHover({ cell, x: p.outlines.cellX[cell], y: p.outlines.cellY[cell], px: ev.clientX - r.left, py: ev.clientY - r.top });
  };

  const snap = p.getSnapshot();
  const hoverValue = hover && snap && snap.values.length > hover.cell ? snap.values[hover.cell] : NaN;
  const layerLabel = (k: number) => `${k}${p.layerNames[k] ? ` · ${p.layerNames[k]}` : ""}`;

  return (
    <section className="card map-card" aria-label="Field map" data-testid="field-map">
      <div className="map-toolbar">
        <label>
          Field{" "}
          <select data-testid="field-picker" value={p.view.kind} onChange={(e) => p.onView({ ...p.view, kind: e.target.value as MapView["kind"] })}>
            {p.fields.map((f) => <option key={f.kind} value={f.kind}>{f.label} [{f.unit}]</option>)}
          </select>
        </label>
        <label className={info.perLayer ? "" : "disabled"}>
          Layer{" "}
          <select data-testid="layer-picker" value={p.view.layer} disabled={!info.perLayer}
            onChange={(e) => p.onView({ ...p.view, layer: Number(e.target.value) })}>
            {Array.from({ length: p.nLayers }, (_, k) => <option key={k} value={k}>{layerLabel(k)}</option>)}
          </select>
        </label>
        <span className="hint" title={info.description}>{info.description}</span>
      </div>
      <div className="map-body">
        <div className="canvas-wrap" style={{ width: frame.width, height: frame.height }}>
          <canvas ref={canvasRef} width={raster.width} height={raster.height} style={{ width: frame.width, height: frame.height }} data-testid="map-canvas"
            data-cells={p.outlines.nCells} data-covered-cells={raster.coveredCells}
            onMouseMove={onMove} onMouseLeave={() => setHover(null)} onClick={(ev) => { const { cell } = cellAtEvent(ev); if (cell >= 0 && p.onPick) p.onPick(cell); }} />
          {hover && (
            <div className="hover" data-testid="map-hover"
              style={{ left: Math.min(hover.px + 14, frame.width - 190), top: Math.max(hover.py - 56, 0) }}>
              <div><b>{fmt(hoverValue, 4)} {info.unit}</b></div>
              <div>cell {hover.cell} · x {km(hover.x)} · y {km(hover.y)}</div>
            </div>
          )}
        </div>
        {snap && <ColourBar scale={info.scale} min={snap.min} max={snap.max} unit={info.unit} label={info.label} height={Math.min(frame.height, 360)} fixed={p.colourRange} />}
      </div>
    </section>
  );
});
