/**
 * Observed order of convergence from (Δt, error) pairs: least squares of log e against log Δt on an
 * automatically chosen asymptotic range.
 */

export interface OrderPoint {
  dt: number;
  /** null for a row that cannot be used (unstable, non-finite, at the reference's floor, too large). */
  error: number | null;
}

export interface OrderFit {
  /** Least-squares slope of log(error) against log(Δt) on the range; null if fewer than two usable rows. */
  order: number | null;
  /** [smallest Δt, largest Δt] of the rows fitted [s]; null without a fit. */
  range: [number, number] | null;
  /** Number of rows fitted. */
  points: number;
  /** Local orders between neighbouring Δt (ascending Δt) over the whole list; null where a row is unusable. */
  localOrders: (number | null)[];
  note?: string;
}

export interface OrderFitOptions {
  /** Local orders in the range may differ by at most this much (default 0.5). */
  spread?: number;
}

/** Least-squares slope of y against x. */
export function slope(x: readonly number[], y: readonly number[]): number {
  const n = x.length;
  const mx = x.reduce((a, b) => a + b, 0) / n;
  const my = y.reduce((a, b) => a + b, 0) / n;
  let sxy = 0; let sxx = 0;
  for (let i = 0; i < n; i++) { sxy += (x[i] - mx) * (y[i] - my); sxx += (x[i] - mx) ** 2; }
  return sxy / sxx;
}

/**
 * Range rule: sort by Δt; the local order between neighbours is log(e₂/e₁)/log(Δt₂/Δt₁). A candidate range is a
 * run of consecutive usable rows whose local orders all lie within `spread` of each other. The longest run wins;
 * among equally long runs the one at smaller Δt (closer to the asymptotic regime). Two usable neighbours are the
 * least a fit needs.
 */
export function fitOrder(points: readonly OrderPoint[], o: OrderFitOptions = {}): OrderFit {
  const spread = o.spread ?? 0.5;
  const pts = [...points].sort((a, b) => a.dt - b.dt);
  const usable = pts.map((p) => p.error !== null && p.error > 0 && Number.isFinite(p.error) && p.dt > 0);
  const local: (number | null)[] = [];
  for (let j = 0; j + 1 < pts.length; j++) {
    local.push(usable[j] && usable[j + 1] && pts[j + 1].dt > pts[j].dt
      ? Math.log(pts[j + 1].error! / pts[j].error!) / Math.log(pts[j + 1].dt / pts[j].dt) : null);
  }
  let best: [number, number] | null = null; // row indices a..b inclusive
  for (let a = 0; a < local.length; a++) {
    if (local[a] === null) continue;
    let lo = local[a]!; let hi = local[a]!;
    let b = a + 1;
    while (b < local.length && local[b] !== null && Math.max(hi, local[b]!) - Math.min(lo, local[b]!) <= spread) {
      lo = Math.min(lo, local[b]!); hi = Math.max(hi, local[b]!); b++;
    }
    // rows a..b (b is the row after the last local order used)
    if (!best || b - a > best[1] - best[0]) best = [a, b];
  }
  if (!best) {
    return { order: null, range: null, points: 0, localOrders: local, note: "fewer than two usable neighbouring rows (stable, above the reference floor, below the error cap)" };
  }
  const sel = pts.slice(best[0], best[1] + 1);
  const order = slope(sel.map((p) => Math.log(p.dt)), sel.map((p) => Math.log(p.error!)));
  return { order, range: [sel[0].dt, sel[sel.length - 1].dt], points: sel.length, localOrders: local };
}
