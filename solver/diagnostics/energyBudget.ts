import type { ShallowWaterModel } from "../model/shallowWater.js";
import { vectorLaplacian } from "../model/terms.js";
import { budgetWork, totalEnergy, type BudgetWork } from "./budget.js";

/**
 * Energy budget of a run, computed by the driver from the states at the ends of the steps (so it holds for any
 * stepper, built-in or a user's module).
 *
 * The energy is that of `totalEnergy`, E = Σ_k Σ_e ½ w_e ĥ_{k,e} u_{k,e}² + available potential energy, with
 * w_e = l_e d_e on open edges. Its time derivative along the semi-discrete equations is Σ_k Σ_e w_e ĥ_{k,e} u_{k,e}
 * (du_{k,e}/dt) + Σ ½ w_e u² dĥ/dt + dPE/dt, in which the adiabatic terms (PV flux, Bernoulli gradient, continuity)
 * cancel exactly — the energy-conserving TRiSK form (Ringler, Thuburn, Klemp and Skamarock 2010, J. Comput. Phys.
 * 229, 3065–3090). What remains are the powers of the terms added in ShallowWaterModel.tendency:
 *   wind    P_w = Σ_e w_e τ_e u_{0,e} / ρ0                       (τ_e/(ρ0 ĥ) on the top layer, times w ĥ u)
 *   drag    P_d = r Σ_e w_e ĥ_{L−1,e} u_{L−1,e}²                  (loss, −r u on the bottom layer)
 *   viscous P_v = −Σ_k Σ_e w_e ĥ_{k,e} u_{k,e} (ν2 ∇²u − ν4 ∇⁴u)_{k,e} (loss, the discrete vector Laplacian)
 * so that dE/dt = P_w − P_d − P_v. Each is integrated over every step with the corrected trapezoid rule
 *   ∫ P dt ≈ h/2 (P_n + P_{n+1}) + h²/12 (P'_n − P'_{n+1}),
 * fourth-order accurate (Davis and Rabinowitz, Methods of Numerical Integration, 2nd ed. 1984, ch. 2: the
 * Euler–Maclaurin formula kept to its first end correction; chapter cited from memory), with P' = ∂P/∂x · F(x) written out from the tendency F:
 *   P_w' = Σ w τ F_{u0}/ρ0;  P_d' = r Σ w (ĥ' u² + 2 ĥ u F_u);  P_v' = −Σ w (ĥ' u V(u) + ĥ F_u V(u) + ĥ u V(F_u))
 * with ĥ' the edge average of F_h and V = ν2 ∇² − ν4 ∇⁴ linear. The residual change − (wind − drag − viscous)
 * is then the energy the time stepper itself creates or destroys, up to the rule's O(h⁴) error.
 */

/** Cumulative budget terms since the start of tracking; energies per unit reference density [m⁵ s⁻²] (× ρ0: joules). */
export interface EnergyBudgetTerms {
  /** E(t) − E(t0). */
  change: number;
  /** ∫ P_w dt: work done by the wind stress. */
  windWork: number;
  /** ∫ P_d dt: energy removed by bottom drag. */
  dragLoss: number;
  /** ∫ P_v dt: energy removed by Laplacian and biharmonic viscosity. */
  viscousLoss: number;
  /** change − (windWork − dragLoss − viscousLoss): energy created (> 0) or destroyed by the time stepping. */
  residual: number;
}

export interface EnergyBudgetSummary extends EnergyBudgetTerms {
  /**
   * |residual| / max(|change|, |windWork|, |dragLoss|, |viscousLoss|); null with `reason` when the run has no
   * forcing or dissipation (then the residual is the energy drift) or nothing moved.
   */
  relativeResidual: number | null;
  reason?: string;
  /** Energy at the start and now [m⁵ s⁻²]. */
  initialEnergy: number;
  finalEnergy: number;
  /** Simulated interval covered [s]. */
  interval: number;
  /** Tendency evaluations spent on the budget (one per step plus one at the start), not counted as the stepper's work. */
  rhsEvaluations: number;
  /** Wall time spent on the budget [s], not counted in the run's wallSeconds. */
  wallSeconds: number;
}

/** The budget at each output time, cumulative from the start (struct of arrays, one entry per output time). */
export interface EnergyBudgetSeries {
  /** Simulated time [s]. */
  time: number[];
  /** Total energy [m⁵ s⁻²]. */
  energy: number[];
  change: number[];
  windWork: number[];
  dragLoss: number[];
  viscousLoss: number[];
  residual: number[];
}

/** Which budget terms a model has. */
export function energySources(model: ShallowWaterModel): { wind: boolean; drag: boolean; viscous: boolean } {
  const p = model.params;
  return {
    wind: !!p.windStress && p.windStress.some((t) => t !== 0),
    drag: p.bottomDrag > 0,
    viscous: p.viscosity > 0 || p.biharmonic > 0,
  };
}

/** True when the model neither forces nor dissipates: its energy is conserved by the equations. */
export function conservesEnergy(model: ShallowWaterModel): boolean {
  const s = energySources(model);
  return !s.wind && !s.drag && !s.viscous;
}

/**
 * Why the relative energy drift of a run means nothing, or null when it does: it is defined only for a run that
 * neither forces nor dissipates and starts with energy (otherwise report the budget residual in its place).
 */
export function driftUndefinedReason(model: ShallowWaterModel, initialEnergy: number): string | null {
  if (!conservesEnergy(model)) {
    return "the run is forced or damped (wind, bottom drag or viscosity), so its energy is not meant to be conserved; see energyBudget.residual";
  }
  if (!(initialEnergy > 0)) return "the run starts with zero energy and nothing forces it: there is no energy to drift";
  return null;
}

/** Wind power, drag and viscous loss rates [m⁵ s⁻³] and their time derivatives along the tendency [m⁵ s⁻⁴]. */
export interface Powers { wind: number; drag: number; viscous: number; dWind: number; dDrag: number; dViscous: number }

export class EnergyBudgetTracker {
  private readonly work: BudgetWork;
  /** F(x) at the last step end. */
  private readonly f: Float64Array;
  /** w_e = l_e d_e on open edges, 0 on coastline edges. */
  private readonly weight: Float64Array;
  /** w_e τ_e / ρ0 on open edges (wind power per unit top-layer velocity). */
  private readonly windCoef: Float64Array | null;
  private readonly lap: Float64Array;
  private readonly lap2: Float64Array;
  private readonly lapF: Float64Array;
  private readonly lap2F: Float64Array;
  private readonly div: Float64Array;
  private readonly vort: Float64Array;
  private readonly sources: ReturnType<typeof energySources>;
  private prev: Powers = { wind: 0, drag: 0, viscous: 0, dWind: 0, dDrag: 0, dViscous: 0 };
  private prevTime = 0;
  private startTime = 0;
  private energy0 = 0;
  private energyNow = 0;
  private windWork = 0;
  private dragLoss = 0;
  private viscousLoss = 0;
  /** Tendency evaluations spent on the budget since the start. */
  rhsEvaluations = 0;
  /** Wall clock for `seconds` (the solver has no clock of its own; the driver passes one). */
  clock: (() => number) | null = null;
  /** Wall time spent in the budget since the start [s] (0 without a clock). */
  seconds = 0;
  readonly series: EnergyBudgetSeries = { time: [], energy: [], change: [], windWork: [], dragLoss: [], viscousLoss: [], residual: [] };

  constructor(readonly model: ShallowWaterModel) {
    const m = model.mesh;
    const ne = m.nEdges;
    this.work = budgetWork(model);
    this.f = new Float64Array(model.n);
    this.weight = new Float64Array(ne);
    for (let e = 0; e < ne; e++) if (m.edgeCells[2 * e + 1] >= 0) this.weight[e] = m.edgeLength[e] * m.edgeCellDistance[e];
    const tau = model.params.windStress;
    this.windCoef = tau ? this.weight.map((w, e) => (w * tau[e]) / model.params.rho0) : null;
    this.lap = new Float64Array(ne);
    this.lap2 = new Float64Array(ne);
    this.lapF = new Float64Array(ne);
    this.lap2F = new Float64Array(ne);
    this.div = new Float64Array(m.nCells);
    this.vort = new Float64Array(m.nVertices);
    this.sources = energySources(model);
  }

  private energyOf(x: Float64Array): number {
    const { kinetic, potential } = totalEnergy(this.model, x, this.work);
    return kinetic + potential;
  }

  /** The three powers and their time derivatives at state x with tendency f = F(x). */
  powers(x: Float64Array, f: Float64Array): Powers {
    const m = this.model.mesh;
    const p = this.model.params;
    const { nLayers: L, nCells: nc, nEdges: ne, uOffset } = this.model.layout;
    const ec = m.edgeCells;
    const w = this.weight;
    const out: Powers = { wind: 0, drag: 0, viscous: 0, dWind: 0, dDrag: 0, dViscous: 0 };
    if (this.sources.wind && this.windCoef) {
      const c = this.windCoef;
      let s = 0;
      let ds = 0;
      for (let e = 0; e < ne; e++) { s += c[e] * x[uOffset + e]; ds += c[e] * f[uOffset + e]; }
      out.wind = s;
      out.dWind = ds;
    }
    if (this.sources.drag) {
      const h = (L - 1) * nc;
      const u = uOffset + (L - 1) * ne;
      let s = 0;
      let ds = 0;
      for (let e = 0; e < ne; e++) {
        if (w[e] === 0) continue;
        const c1 = ec[2 * e];
        const c2 = ec[2 * e + 1];
        const he = 0.5 * (x[h + c1] + x[h + c2]);
        const dhe = 0.5 * (f[h + c1] + f[h + c2]);
        const ue = x[u + e];
        s += w[e] * he * ue * ue;
        ds += w[e] * (dhe * ue * ue + 2 * he * ue * f[u + e]);
      }
      out.drag = p.bottomDrag * s;
      out.dDrag = p.bottomDrag * ds;
    }
    if (this.sources.viscous) {
      const nu2 = p.viscosity;
      const nu4 = p.biharmonic;
      let s = 0;
      let ds = 0;
      for (let k = 0; k < L; k++) {
        const h = k * nc;
        const u = uOffset + k * ne;
        vectorLaplacian(this.lap, m, x, u, this.div, this.vort);
        vectorLaplacian(this.lapF, m, f, u, this.div, this.vort);
        if (nu4 > 0) {
          vectorLaplacian(this.lap2, m, this.lap, 0, this.div, this.vort);
          vectorLaplacian(this.lap2F, m, this.lapF, 0, this.div, this.vort);
        }
        for (let e = 0; e < ne; e++) {
          if (w[e] === 0) continue;
          const c1 = ec[2 * e];
          const c2 = ec[2 * e + 1];
          const he = 0.5 * (x[h + c1] + x[h + c2]);
          const dhe = 0.5 * (f[h + c1] + f[h + c2]);
          const ue = x[u + e];
          const fe = f[u + e];
          const v = nu2 * this.lap[e] - (nu4 > 0 ? nu4 * this.lap2[e] : 0);
          const vF = nu2 * this.lapF[e] - (nu4 > 0 ? nu4 * this.lap2F[e] : 0);
          s += w[e] * he * ue * v;
          ds += w[e] * (dhe * ue * v + he * fe * v + he * ue * vF);
        }
      }
      out.viscous = -s;
      out.dViscous = -ds;
    }
    return out;
  }

  private needsTendency(): boolean {
    return this.sources.wind || this.sources.drag || this.sources.viscous;
  }

  /** Start (or restart) the budget at state x, time t; clears the series and records its first entry. */
  start(x: Float64Array, t: number): void {
    this.energy0 = this.energyOf(x);
    this.energyNow = this.energy0;
    this.windWork = 0;
    this.dragLoss = 0;
    this.viscousLoss = 0;
    this.startTime = t;
    this.prevTime = t;
    this.rhsEvaluations = 0;
    this.seconds = 0;
    if (this.needsTendency()) {
      this.model.tendency(this.f, x, t);
      this.rhsEvaluations++;
      this.prev = this.powers(x, this.f);
    }
    for (const key of Object.keys(this.series) as (keyof EnergyBudgetSeries)[]) this.series[key].length = 0;
    this.record(x);
  }

  /** Account for the step that has just brought the state to x at time t. */
  afterStep(x: Float64Array, t: number): void {
    const c0 = this.clock ? this.clock() : 0;
    const h = t - this.prevTime;
    if (this.needsTendency()) {
      this.model.tendency(this.f, x, t);
      this.rhsEvaluations++;
      const a = this.prev;
      const b = this.powers(x, this.f);
      // corrected trapezoid rule (Davis and Rabinowitz 1984, ch. 2)
      const rule = (p0: number, p1: number, d0: number, d1: number) => 0.5 * h * (p0 + p1) + (h * h / 12) * (d0 - d1);
      this.windWork += rule(a.wind, b.wind, a.dWind, b.dWind);
      this.dragLoss += rule(a.drag, b.drag, a.dDrag, b.dDrag);
      this.viscousLoss += rule(a.viscous, b.viscous, a.dViscous, b.dViscous);
      this.prev = b;
    }
    this.prevTime = t;
    if (this.clock) this.seconds += this.clock() - c0;
  }

  /** The cumulative terms at the last state whose energy was computed (by `record` or `summary`). */
  terms(): EnergyBudgetTerms {
    const change = this.energyNow - this.energy0;
    return {
      change, windWork: this.windWork, dragLoss: this.dragLoss, viscousLoss: this.viscousLoss,
      residual: change - (this.windWork - this.dragLoss - this.viscousLoss),
    };
  }

  /**
   * Append the terms at the current state x (the state of the last step) to the series; the driver calls this
   * at each output time. The energy is computed here, not every step.
   */
  record(x: Float64Array): void {
    const s = this.series;
    if (s.time.length && s.time[s.time.length - 1] === this.prevTime) return;
    this.energyNow = this.energyOf(x);
    const t = this.terms();
    s.time.push(this.prevTime);
    s.energy.push(this.energyNow);
    s.change.push(t.change);
    s.windWork.push(t.windWork);
    s.dragLoss.push(t.dragLoss);
    s.viscousLoss.push(t.viscousLoss);
    s.residual.push(t.residual);
  }

  /** The budget from the start to state x (the current state of the run); appends nothing to the series. */
  summary(x: Float64Array): EnergyBudgetSummary {
    this.energyNow = this.energyOf(x);
    const t = this.terms();
    const base = { ...t, initialEnergy: this.energy0, finalEnergy: this.energyNow, interval: this.prevTime - this.startTime, rhsEvaluations: this.rhsEvaluations, wallSeconds: this.seconds };
    if (!this.needsTendency()) {
      return { ...base, relativeResidual: null, reason: "the run has no wind, drag or viscosity: the residual is the energy drift (see energy.maxRelativeDrift)" };
    }
    const scale = Math.max(Math.abs(t.change), Math.abs(t.windWork), Math.abs(t.dragLoss), Math.abs(t.viscousLoss));
    if (!(scale > 0)) return { ...base, relativeResidual: null, reason: "no energy changed hands (no step taken, or nothing moved)" };
    return { ...base, relativeResidual: Math.abs(t.residual) / scale };
  }
}
