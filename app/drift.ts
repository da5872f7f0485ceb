import type { EnergyBudgetTerms } from "../solver/diagnostics/energyBudget.js";

/** Drift series for the plots, derived from the raw budget samples the worker reports every chunk. */
export interface BudgetSample {
  /** Simulated time [s]. */
  time: number;
  /** Total energy per unit reference density [m⁵/s²]. */
  energy: number;
  /** Volume of each layer [m³]. */
  mass: number[];
  /** The energy budget since the start of the run, when the worker tracks it. */
  energyBudget?: EnergyBudgetTerms | null;
}

export interface DriftSeries {
  days: number[];
  energy: number[];
  /** mass[k][j]: relative drift of layer k at sample j. */
  mass: number[][];
  /** What the energy drift is relative to. */
  energyReference: "initial" | "largest";
}

/**
 * Relative energy drift (E − E0)/|E0|; from rest (E0 = 0) relative to the largest |E| reached so far.
 * Relative mass drift per layer (M_k − M_k0)/M_k0.
 */
export function driftSeries(samples: readonly BudgetSample[]): DriftSeries {
  const n = samples.length;
  const L = n ? samples[0].mass.length : 0;
  const e0 = n ? samples[0].energy : 0;
  let ref = Math.abs(e0);
  let energyReference: DriftSeries["energyReference"] = "initial";
  if (!(ref > 0)) {
    energyReference = "largest";
    for (const s of samples) ref = Math.max(ref, Math.abs(s.energy));
  }
  const days = new Array<number>(n);
  const energy = new Array<number>(n);
  const mass = Array.from({ length: L }, () => new Array<number>(n));
  for (let j = 0; j < n; j++) {
    const s = samples[j];
    days[j] = s.time / 86400;
    energy[j] = ref > 0 ? (s.energy - e0) / ref : 0;
    for (let k = 0; k < L; k++) mass[k][j] = (s.mass[k] - samples[0].mass[k]) / samples[0].mass[k];
  }
  return { days, energy, mass, energyReference };
}

/** Keep a long history bounded: past `limit` samples, drop every second one (keeping the first and last). */
export function thin(samples: BudgetSample[], limit: number): BudgetSample[] {
  if (samples.length <= limit) return samples;
  const out: BudgetSample[] = [];
  for (let j = 0; j < samples.length - 1; j += 2) out.push(samples[j]);
  out.push(samples[samples.length - 1]);
  return out;
}
