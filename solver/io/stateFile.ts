import { SolverError } from "../errors.js";
import { layerMass } from "../diagnostics/budget.js";
import type { ShallowWaterModel } from "../model/shallowWater.js";

/**
 * A compact state file (JSON, a few tens of kB) to start the sandbox or a run from a spun-up state instead of
 * the scenario's initial state. Format "stepwell-state-1":
 *
 *   {
 *     "format": "stepwell-state-1",
 *     "scenario": name, "time": simulated seconds, "step": steps taken, "method": stepper, "dt": its Δt [s],
 *     "nLayers", "nCells", "nEdges",
 *     "encoding": "float32-le-base64",
 *     "thicknessAnomaly": base64 of nLayers × nCells float32 (little-endian), h − h_rest per layer, layer-major [m],
 *     "normalVelocity":   base64 of nLayers × nEdges float32 (little-endian), layer-major [m/s],
 *     "layerVolume": [ per-layer volume Σ A_i h_i of the full-precision state [m³] ]
 *   }
 *
 * Single precision keeps the file small; storing thickness as the departure from rest keeps its absolute error
 * near 1e-7 of the anomaly instead of 1e-7 of the thickness. On reading, each layer is shifted uniformly by
 * (stored volume − volume read) / area, so the layer volumes are those of the full-precision state to round-off.
 * Pure: text in, text out.
 */
export const STATE_FORMAT = "stepwell-state-1";

export interface StateFile {
  format: typeof STATE_FORMAT;
  scenario: string;
  time: number;
  step: number;
  method: string;
  dt: number;
  nLayers: number;
  nCells: number;
  nEdges: number;
  encoding: "float32-le-base64";
  thicknessAnomaly: string;
  normalVelocity: string;
  layerVolume: number[];
}

// atob and btoa exist in Node (≥ 16), browsers and workers; the solver's DOM-free lib leaves their types out.
declare function btoa(data: string): string;
declare function atob(data: string): string;

function toBase64(bytes: Uint8Array): string {
  let s = "";
  for (let i = 0; i < bytes.length; i += 0x8000) s += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(s);
}

function fromBase64(s: string, field: string): Uint8Array {
  let text: string;
  try {
    text = atob(s);
  } catch {
    throw new SolverError("bad-input", `${field}: is not base64 text`, field);
  }
  const out = new Uint8Array(text.length);
  for (let i = 0; i < text.length; i++) out[i] = text.charCodeAt(i);
  return out;
}

function floats(values: ArrayLike<number>, offset: number, count: number, shift?: ArrayLike<number>): string {
  const b = new Uint8Array(4 * count);
  const v = new DataView(b.buffer);
  for (let i = 0; i < count; i++) v.setFloat32(4 * i, values[offset + i] - (shift ? shift[offset + i] : 0), true);
  return toBase64(b);
}

/** The state x of `model` as a state file. */
export function encodeState(model: ShallowWaterModel, x: Float64Array, meta: { scenario: string; time: number; step: number; method: string; dt: number }): StateFile {
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset } = model.layout;
  const rest = model.restState();
  return {
    format: STATE_FORMAT, ...meta, nLayers: L, nCells: nc, nEdges: ne, encoding: "float32-le-base64",
    thicknessAnomaly: floats(x, 0, L * nc, rest), normalVelocity: floats(x, uOffset, L * ne), layerVolume: layerMass(model, x),
  };
}

/** The state a state file holds, for `model` (sizes checked; one error naming the field otherwise). */
export function decodeState(model: ShallowWaterModel, raw: unknown, source = "state"): { state: Float64Array; time: number; step: number } {
  const f = raw as Partial<StateFile> | null;
  const bad = (field: string, msg: string) => new SolverError("bad-input", `${source}.${field}: ${msg}`, `${source}.${field}`);
  if (!f || typeof f !== "object" || f.format !== STATE_FORMAT) throw bad("format", `must be "${STATE_FORMAT}"`);
  const { nLayers: L, nCells: nc, nEdges: ne, uOffset } = model.layout;
  if (f.nLayers !== L || f.nCells !== nc || f.nEdges !== ne) {
    throw bad("nCells", `the file holds ${f.nLayers} layers, ${f.nCells} cells and ${f.nEdges} edges; the scenario has ${L}, ${nc} and ${ne}`);
  }
  if (f.encoding !== "float32-le-base64") throw bad("encoding", 'must be "float32-le-base64"');
  if (!Array.isArray(f.layerVolume) || f.layerVolume.length !== L) throw bad("layerVolume", `must list ${L} volumes`);
  const read = (field: "thicknessAnomaly" | "normalVelocity", count: number): DataView => {
    if (typeof f[field] !== "string") throw bad(field, "is missing");
    const b = fromBase64(f[field] as string, `${source}.${field}`);
    if (b.length !== 4 * count) throw bad(field, `holds ${Math.floor(b.length / 4)} values, expected ${count}`);
    return new DataView(b.buffer);
  };
  const h = read("thicknessAnomaly", L * nc);
  const u = read("normalVelocity", L * ne);
  const x = model.restState();
  for (let q = 0; q < L * nc; q++) x[q] += h.getFloat32(4 * q, true);
  for (let q = 0; q < L * ne; q++) x[uOffset + q] = u.getFloat32(4 * q, true);
  const area = model.mesh.cellArea.reduce((s, a) => s + a, 0);
  const vol = layerMass(model, x);
  for (let k = 0; k < L; k++) {
    const shift = ((f.layerVolume[k] as number) - vol[k]) / area;
    for (let i = 0; i < nc; i++) x[k * nc + i] += shift;
  }
  for (let q = 0; q < L * nc; q++) if (!(x[q] > 0)) throw bad("thicknessAnomaly", `gives a layer thickness ${x[q]} m ≤ 0 at layer ${Math.floor(q / nc)}, cell ${q % nc}`);
  return { state: x, time: Number(f.time ?? 0), step: Number(f.step ?? 0) };
}
