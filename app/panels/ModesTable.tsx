import { memo } from "react";
import type { MethodSummary, RunDescription } from "../../workers/protocol.js";
import { fmt } from "../format.js";

interface ModesTableProps {
  readonly description: RunDescription;
  readonly methods: readonly MethodSummary[];
  readonly dt: number;
}

const RK4_BOUND = 2 * Math.SQRT2;

/**
 * Vertical modes and a Δt limit per method: for a method whose stability region reaches |ωΔt| ≤ bound on the
 * imaginary axis, Δt_max = bound/ω_max with ω_max = √6 c0/d, i.e. the RK4 limit scaled by bound/(2√2).
 */
export const ModesTable = memo(function ModesTable({ description, methods, dt }: ModesTableProps) {
  return (
    <section aria-label="Modes" data-testid="modes-panel">
      <h3>Vertical modes</h3>
      <table className="grid-table" data-testid="modes-table">
        <thead><tr><th>mode</th><th>wave speed [m/s]</th><th>Rossby radius [km]</th></tr></thead>
        <tbody>
          {description.modes.map((m) => (
            <tr key={m.index}>
              <td>{m.index === 0 ? "0 (barotropic)" : m.index}</td>
              <td>{fmt(m.speed, 4)}</td>
              <td>{Number.isFinite(m.rossbyRadius) ? fmt(m.rossbyRadius / 1000, 4) : "∞ (no rotation)"}</td>
            </tr>
          ))}
        </tbody>
      </table>
      <h3>Δt limit estimates ({description.nCells} cells, d = {fmt(description.spacing / 1000)} km)</h3>
      <p className="hint">Explicit methods: the fastest gravity wave. Split-explicit: the first baroclinic wave (the barotropic
        mode is sub-cycled). Exponential methods have no linear gravity-wave limit; measure theirs with a stability study.</p>
      <table className="grid-table" data-testid="limits-table">
        <thead><tr><th>method</th><th>Δt limit [s]</th><th>current Δt / limit</th></tr></thead>
        <tbody>
          {methods.map((m) => {
            // fastest wave for fully explicit methods; first baroclinic wave (ω1 = √6 c1/d) for split methods
            const c1 = description.modes[1]?.speed;
            const limit = m.imaginaryAxisBound !== undefined ? (description.rk4DtLimit * m.imaginaryAxisBound) / RK4_BOUND
              : m.baroclinicAxisBound !== undefined && c1 ? (m.baroclinicAxisBound * description.spacing) / (Math.sqrt(6) * c1) : NaN;
            return (
              <tr key={m.name} data-method={m.name}>
                <td>{m.name}</td>
                <td>{Number.isFinite(limit) ? fmt(limit, 4) : m.imaginaryAxisBound === undefined ? "no estimate" : "unbounded"}</td>
                <td>{Number.isFinite(limit) ? fmt(dt / limit, 3) : "—"}</td>
              </tr>
            );
          })}
        </tbody>
      </table>
    </section>
  );
});
