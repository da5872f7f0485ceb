/** Small timing helpers for `npm run bench` (not a test: the machine is shared and noisy). */

export interface Timing { best: number; median: number; runs: number }

/** Time `fn` (one call = one unit of work) in `reps` repetitions of `inner` calls, after warm-up. */
export function time(fn: () => void, o: { warmup?: number; reps?: number; inner?: number; clock?: () => number } = {}): Timing {
  const t = samples(fn, o);
  return { ...summary(t), runs: t.length * (o.inner ?? 5) };
}

/**
 * Milliseconds per call of each of `reps` repetitions of `inner` calls, after warm-up; by the wall clock, or with
 * `clock: cpuClock` by this process's CPU time (less disturbed by other processes on a shared machine).
 */
export function samples(fn: () => void, o: { warmup?: number; reps?: number; inner?: number; clock?: () => number } = {}): number[] {
  const warm = o.warmup ?? 5;
  const reps = o.reps ?? 9;
  const inner = o.inner ?? 5;
  const clock = o.clock ?? (() => performance.now());
  for (let i = 0; i < warm; i++) fn();
  const t: number[] = [];
  for (let r = 0; r < reps; r++) {
    const t0 = clock();
    for (let i = 0; i < inner; i++) fn();
    t.push((clock() - t0) / inner);
  }
  return t;
}

/** CPU time of this process in milliseconds (user + system, microsecond resolution). */
export function cpuClock(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
}

/** Best and median of a list of timings. */
export function summary(t: readonly number[]): { best: number; median: number } {
  const s = [...t].sort((a, b) => a - b);
  return { best: s[0], median: s[Math.floor(s.length / 2)] };
}

export const round = (v: number, digits = 4) => Number(v.toPrecision(digits));
