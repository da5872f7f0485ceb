/**
 * Every map field at one cell of the current state, for the sandbox's inspector: a paused run, one cell clicked,
 * all fields and layers with their units.
 */
import { computeField, FIELDS, type FieldWork } from "../solver/diagnostics/fields.js";
import type { Run } from "../solver/driver/run.js";

export interface CellProbe {
  cell: number;
  /** Cell centre [m]. */
  x: number;
  y: number;
  step: number;
  time: number;
  values: { kind: string; label: string; unit: string; layer: number | null; value: number }[];
}

/** One field array of nCells is filled per field and layer (an inspector click, not a per-step path). */
export function probeCell(run: Run, work: FieldWork, cell: number): CellProbe {
  const n = run.mesh.nCells;
  if (!(Number.isInteger(cell) && cell >= 0 && cell < n)) {
    throw { name: "SolverError", code: "bad-input", field: "cell", message: `cell: must be a whole number from 0 to ${n - 1}, got ${cell}` };
  }
  const out = new Float64Array(n);
  const values: CellProbe["values"] = [];
  for (const f of FIELDS) {
    const layers = f.perLayer ? run.model.layout.nLayers : 1;
    for (let k = 0; k < layers; k++) {
      computeField(out, f.kind, k, run.model, run.state, work);
      values.push({ kind: f.kind, label: f.label, unit: f.unit, layer: f.perLayer ? k : null, value: out[cell] });
    }
  }
  return { cell, x: run.mesh.cellX[cell], y: run.mesh.cellY[cell], step: run.steps, time: run.time, values };
}
