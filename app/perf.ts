/** Frame figures of the map, read by the browser tests (window.__stepwellPerf) and shown nowhere else. */
export interface MapPerf {
  draws: number;
  drawMsTotal: number;
  drawMsMax: number;
  snapshots: number;
  /** Snapshots whose buffer was a recycled one. */
  recycled: number;
  /** Time to build the pixel → cell raster of the current mesh [ms]. */
  rasterMs: number;
}
export const mapPerf: MapPerf = { draws: 0, drawMsTotal: 0, drawMsMax: 0, snapshots: 0, recycled: 0, rasterMs: 0 };
(globalThis as unknown as { __stepwellPerf: MapPerf }).__stepwellPerf = mapPerf;
