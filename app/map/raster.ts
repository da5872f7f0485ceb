import type { CellOutlines } from "../../workers/protocol.js";

/**
 * The map is drawn as one image: a raster that stores, per pixel, the index of the cell whose outline contains
 * the pixel centre (−1 for land), built once per mesh and canvas size. A frame is then one pass over the pixels
 * (cost independent of the number of cells) plus a cached coastline path.
 */
export interface MapRaster {
  readonly width: number;
  readonly height: number;
  /** Cell index per pixel, row-major from the top-left, −1 where no cell is. */
  readonly cellAt: Int32Array;
  /** Cells that own at least one pixel (a cell smaller than a pixel still gets its centre pixel). */
  readonly coveredCells: number;
  /** Metres → pixels. */
  readonly scale: number;
  readonly x0: number;
  readonly y1: number;
  toPixel(x: number, y: number): [number, number];
  toWorld(px: number, py: number): [number, number];
}

export function mapFrame(o: CellOutlines, maxWidth: number, maxHeight: number) {
  const w = o.xMax - o.xMin;
  const h = o.yMax - o.yMin;
  const scale = Math.min(maxWidth / w, maxHeight / h);
  return { width: Math.max(1, Math.floor(w * scale)), height: Math.max(1, Math.floor(h * scale)), scale };
}

export function buildRaster(o: CellOutlines, width: number, height: number, scale: number): MapRaster {
  const cellAt = new Int32Array(width * height).fill(-1);
  const x0 = o.xMin;
  const y1 = o.yMax;
  const shifts: [number, number][] = [];
  if (o.kind === "periodic") {
    for (const sx of [-o.width, 0, o.width]) for (const sy of [-o.height, 0, o.height]) shifts.push([sx, sy]);
  } else {
    shifts.push([0, 0]);
  }
  const px = new Float64Array(64);
  const py = new Float64Array(64);
  const owned = new Uint8Array(o.nCells);
  for (let i = 0; i < o.nCells; i++) {
    const a = o.offset[i];
    const nv = o.offset[i + 1] - a;
    for (const [sx, sy] of shifts) {
      let xmin = Infinity; let xmax = -Infinity; let ymin = Infinity; let ymax = -Infinity;
      for (let q = 0; q < nv; q++) {
        px[q] = (o.vertexXY[2 * (a + q)] + sx - x0) * scale;
        py[q] = (y1 - (o.vertexXY[2 * (a + q) + 1] + sy)) * scale;
        xmin = Math.min(xmin, px[q]); xmax = Math.max(xmax, px[q]);
        ymin = Math.min(ymin, py[q]); ymax = Math.max(ymax, py[q]);
      }
      const c0 = Math.max(0, Math.ceil(xmin - 0.5)); const c1 = Math.min(width - 1, Math.floor(xmax - 0.5));
      const r0 = Math.max(0, Math.ceil(ymin - 0.5)); const r1 = Math.min(height - 1, Math.floor(ymax - 0.5));
      for (let r = r0; r <= r1; r++) {
        const yc = r + 0.5;
        for (let c = c0; c <= c1; c++) {
          const xc = c + 0.5;
          // inside a convex outline: the pixel centre is on the same side of every edge (y points down here)
          let inside = true;
          for (let q = 0; q < nv && inside; q++) {
            const q2 = q + 1 < nv ? q + 1 : 0;
            const cross = (px[q2] - px[q]) * (yc - py[q]) - (py[q2] - py[q]) * (xc - px[q]);
            if (cross > 1e-9) inside = false;
          }
          if (inside) { cellAt[r * width + c] = i; owned[i] = 1; }
        }
      }
    }
  }
  let coveredCells = 0;
  for (let i = 0; i < o.nCells; i++) {
    if (!owned[i]) {
      const c = Math.min(width - 1, Math.max(0, Math.floor((o.cellX[i] - x0) * scale)));
      const r = Math.min(height - 1, Math.max(0, Math.floor((y1 - o.cellY[i]) * scale)));
      cellAt[r * width + c] = i;
    }
  }
  const seen = new Uint8Array(o.nCells);
  for (let p = 0; p < cellAt.length; p++) if (cellAt[p] >= 0) seen[cellAt[p]] = 1;
  for (let i = 0; i < o.nCells; i++) coveredCells += seen[i];
  return {
    width, height, cellAt, coveredCells, scale, x0, y1,
    toPixel: (x, y) => [(x - x0) * scale, (y1 - y) * scale],
    toWorld: (cx, cy) => [x0 + cx / scale, y1 - cy / scale],
  };
}

/** Coastline as one path in pixel coordinates. */
export function coastPath(o: CellOutlines, r: MapRaster): Path2D {
  const p = new Path2D();
  for (let c = 0; c < o.coast.length; c += 4) {
    const [ax, ay] = r.toPixel(o.coast[c], o.coast[c + 1]);
    const [bx, by] = r.toPixel(o.coast[c + 2], o.coast[c + 3]);
    p.moveTo(ax, ay);
    p.lineTo(bx, by);
  }
  return p;
}

/** Outline of one cell in pixel coordinates (for the hover and blow-up marks). */
export function cellPath(o: CellOutlines, r: MapRaster, i: number): Path2D {
  const p = new Path2D();
  for (let q = o.offset[i]; q < o.offset[i + 1]; q++) {
    const [x, y] = r.toPixel(o.vertexXY[2 * q], o.vertexXY[2 * q + 1]);
    if (q === o.offset[i]) p.moveTo(x, y); else p.lineTo(x, y);
  }
  p.closePath();
  return p;
}
