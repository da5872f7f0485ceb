import { readFileSync } from "node:fs";
import { Run } from "../../solver/driver/run";
import { decodeState } from "../../solver/io/stateFile";
import { hexMaxFrequency } from "../../solver/model/modes";
import { buildScenario, type BuiltScenario } from "../../solver/scenario/build";
import { builtinScenario } from "../../solver/scenario/builtins";
import { parseScenario, type StepperSpec } from "../../solver/scenario/schema";
import { defaultLabel } from "../../solver/studies/common";
import { stateErrors } from "../../solver/studies/metrics";
import { MemoryReferenceCache, planReference, referenceRun } from "../../solver/studies/reference";
import { perturbedScenario } from "../../solver/studies/stability";
import { getMethod, methodNames } from "../../solver/time/registry";
import { cpuClock, round, summary } from "./harness";
import type { BenchSection } from "./sections";

/**
 * Benchmark goals: each long-step stepper against RK4 near its limit over one simulated day, with its error
 * against a fine RK4 reference (Δt = a quarter of the RK4 limit, same end time) in the sweep study's own norms
 * (`stateErrors`: the `thickness` and `surface` keys), on the main demo basin and on the eddying scenario.
 *
 * Wall time of a row = one-time set-up (building the stepper and its first step, less one ordinary step: the
 * factorizations of the shifted solves, spectral bounds, the start of a multistep method) + stepping (the
 * other steps, scaled to one day). Speed-ups are given on stepping and on the total of a one-day run. Each row
 * runs `rounds` times, all rows of a round one after the other (alternating), each on a freshly built model so
 * that no row inherits another's cached operators or factorizations; best and median are printed.
 */

const DAY = 86400;
/** A thickness error at or below this meets the accuracy of the goals (the sweep's `thickness` norm). */
const GOAL_THICKNESS_ERROR = 1e-2;
/** Layer volumes count as exact when their largest relative drift over the run stays at round-off. */
const EXACT_VOLUME = 1e-12;

interface GoalScenario { name: string; start?: string; about: string }

const GOAL_SCENARIOS: GoalScenario[] = [
  { name: "shelf-gyre-basin", about: "from rest: day 0 to 1 of the wind spin-up" },
  { name: "eddying-jets", start: "public/states/eddying-jets-day20.json", about: "from the shipped eddying day-20 state: one day on" },
];

interface Candidate { spec: Record<string, unknown>; factors: number[] }

/**
 * The rows. `modes:2` (barotropic and first baroclinic mode in the linear part) where the steps pass the first
 * baroclinic mode's explicit limit; on a two-layer scenario modes:2 is every mode. rational-damped (with `rest`: a filter is refused with modes:N) keeps the
 * waves up to the fastest baroclinic wave of the grid (its cut-off) and damps the faster barotropic ones.
 */
function candidates(cutoff: number, quick: boolean): Candidate[] {
  const all = quick ? [20, 100] : [20, 50, 100];
  const ends = [20, 100];
  return [
    { spec: { method: "split-explicit" }, factors: [20] },
    { spec: { method: "imex-ars232", linear: "modes:1" }, factors: [20] },
    { spec: { method: "imex-ars232", linear: "modes:2" }, factors: all },
    { spec: { method: "imex-ars232", linear: "rest" }, factors: [100] },
    { spec: { method: "imex-ars443", linear: "modes:2" }, factors: ends },
    { spec: { method: "imex-ars443", linear: "rest" }, factors: [100] },
    { spec: { method: "imex-trapezoidal", linear: "modes:2" }, factors: all },
    // the Krylov rows cost several times RK4's day (a few hundred to over a thousand matvecs a step): one of each method
    { spec: { method: "etdrk4", linear: "modes:1", backend: "krylov" }, factors: [20] },
    { spec: { method: "etdrk4", linear: "modes:2", backend: "chebyshev" }, factors: ends },
    // rational-damped: one φ-action of exp-ab2 costs about 2 s on the demo basin (Lanczos on two rest solves per step
    // of it), so one row at the longest step only
    { spec: { method: "exp-ab2", linear: "rest", backend: "rational-damped", filter: { order: 16, cutoff } }, factors: [100] },
    { spec: { method: "etd2rk", linear: "modes:2", backend: "krylov" }, factors: ends },
    { spec: { method: "exp-ab2", linear: "modes:2", backend: "krylov" }, factors: [20] },
    { spec: { method: "exp-ab2", linear: "modes:2", backend: "chebyshev" }, factors: all },
  ];
}

/** One timed run of one row. */
interface Sample { setupSeconds: number; steppingSecondsPerDay: number; totalSecondsPerDay: number }

interface RowResult {
  label: string;
  spec: Record<string, unknown>;
  family: string;
  factor: number;
  dt: number;
  steps: number;
  status: "completed" | "unstable" | "refused";
  reason?: string;
  samples: Sample[];
  thicknessError: number | null;
  surfaceError: number | null;
  /** Area-weighted RMS of η − η_ref over the domain [m]. */
  surfaceRmsMetres: number | null;
  maxVolumeDrift: number | null;
  /** Per ordinary step (the second to the last). */
  phiActionsPerStep: number;
  matvecsPerStep: number;
  /** Matvecs (and their equivalents of factorizations and solves) of the first step. */
  firstStepMatvecs: number;
}

/** Seconds of this process's CPU time (the machine is shared; `--wall` for the wall clock), as the kernel table. */
let now = () => cpuClock() / 1000;

/** A fresh build of the scenario (own model, own cached operators), started from the goal scenario's state. */
function freshBuilt(sc: GoalScenario, startFile: unknown): BuiltScenario {
  const built = buildScenario(parseScenario(builtinScenario(sc.name)));
  if (startFile) built.initial.set(decodeState(built.model, startFile, sc.start).state);
  return built;
}

/** Run one row once: build (timed), step by step (each step timed), volume drift after every step (not timed). */
function runRow(built: BuiltScenario, spec: Record<string, unknown>, dt: number, steps: number, reference: Float64Array | null) {
  const t0 = now();
  const run = new Run(built, { ...spec, dt } as StepperSpec);
  const create = now() - t0;
  const volume0 = run.budget().mass;
  let drift = 0;
  const stepSeconds: number[] = [];
  let first = { matvecs: 0, phiActions: 0 };
  for (let s = 0; s < steps; s++) {
    const a = now();
    const ok = run.advance(1);
    stepSeconds.push(now() - a);
    if (!ok) break;
    if (s === 0) first = { matvecs: run.stepper.stats.matvecs, phiActions: run.stepper.stats.phiActions };
    run.budget().mass.forEach((v, k) => { drift = Math.max(drift, Math.abs(v - volume0[k]) / Math.abs(volume0[k])); });
  }
  const st = run.stepper.stats;
  const done = run.steps;
  // set-up: building the stepper and its first step, less what an ordinary step costs
  const later = stepSeconds.slice(1);
  const perStep = later.length ? later.reduce((x, y) => x + y, 0) / later.length : stepSeconds[0];
  const setup = Math.max(0, create + stepSeconds[0] - perStep);
  const sample: Sample = { setupSeconds: setup, steppingSecondsPerDay: (perStep * DAY) / dt, totalSecondsPerDay: setup + (perStep * DAY) / dt };
  let errors: { thickness: number; surface: number; rms: number } | null = null;
  if (!run.unstable && reference) {
    const m = built.model;
    const rel = stateErrors(m, run.state, reference, m.restState()).errors;
    // with the reference as its own "rest" state the reference norm is zero and stateErrors returns the absolute norm
    const abs = stateErrors(m, run.state, reference, reference).errors.surface;
    let area = 0;
    for (let i = 0; i < built.mesh.nCells; i++) area += built.mesh.cellArea[i];
    errors = { thickness: rel.thickness, surface: rel.surface, rms: abs / Math.sqrt(area) };
  }
  return {
    run, sample, errors, drift, unstable: run.unstable,
    // per ordinary step: the first step's work (factorizations, a multistep start) is the set-up's
    firstStepMatvecs: first.matvecs,
    phiActionsPerStep: done > 1 ? (st.phiActions - first.phiActions) / (done - 1) : first.phiActions,
    matvecsPerStep: done > 1 ? (st.matvecs - first.matvecs) / (done - 1) : first.matvecs,
  };
}

/** Steps and growth bound of the stability check of the long-step goal (see `perturbationGrowth`). */
const CHECK_STEPS = 30;
const CHECK_GROWTH = 10;
const CHECK_ROWS = 8;

/**
 * Growth of the stability study's seeded grid-scale noise (1e-6 of each layer's nominal thickness, layer volumes
 * unchanged) over `steps` steps: ‖h_p − h‖ after them over ‖h_p − h‖ at the start, in the sweep's thickness norm
 * (absolute: the unperturbed run as its own rest state). A one-day run of a few long steps can end while a
 * grid-scale mode grows slowly; this shows it.
 */
function perturbationGrowth(built: BuiltScenario, spec: Record<string, unknown>, dt: number, steps: number): { growth: number; reason?: string } {
  const a = new Run(built, { ...spec, dt } as StepperSpec);
  const b = new Run(perturbedScenario(built, 1e-6), { ...spec, dt } as StepperSpec);
  const size = () => stateErrors(built.model, b.state, a.state, a.state).errors.thickness;
  const d0 = size();
  const okA = a.advance(steps), okB = b.advance(steps);
  if (!okA || !okB) return { growth: Infinity, reason: `${okA ? "with" : "without"} noise at step ${(a.unstable ?? b.unstable)!.step}: ${(a.unstable ?? b.unstable)!.reason}` };
  return { growth: size() / d0 };
}

const fx = (v: number | null, d = 2) => (v === null || !Number.isFinite(v) ? "—" : v.toExponential(d));
const ff = (v: number, d: number) => v.toFixed(d);

function runScenario(sc: GoalScenario, log: (s: string) => void, quick: boolean, rounds: number) {
  const startFile = sc.start ? JSON.parse(readFileSync(new URL(`../../${sc.start}`, import.meta.url), "utf8")) : null;
  const probeBuilt = freshBuilt(sc, startFile);
  const probe = new Run(probeBuilt, { method: "rk4", dt: 1 });
  const limit = probe.rk4DtLimit();
  const spacing = probe.mesh.spacing;
  const baroclinic = probe.modes.speeds[1] ?? 0;
  const cutoff = hexMaxFrequency(baroclinic, spacing);
  const stepsFor = (target: number, r: (x: number) => number) => Math.max(1, r(DAY / target));

  // the fine reference: RK4 at a quarter of its limit, and its own error estimate (the same method at twice that Δt)
  const t0 = now();
  const refPlan = planReference({ method: "rk4" }, limit / 4, DAY);
  const ref = referenceRun(freshBuilt(sc, startFile), refPlan, new MemoryReferenceCache(1));
  const refSeconds = now() - t0;

  const d = probe.describe();
  // Courant numbers at 100× the RK4 limit, with the faster flow of the start and the reference's end state
  const [b0, b1] = [probe.budget(probeBuilt.initial), probe.budget(ref.state)];
  const courant100 = probe.courant(b0.maxSpeed >= b1.maxSpeed ? b0 : b1, 100 * limit);
  log(`Benchmark goals: ${sc.name} (${d.nCells} cells, ${d.nLayers} layers, ${spacing / 1000} km), one simulated day ${sc.about}.`);
  log(`  RK4 limit ${ff(limit, 2)} s (barotropic speed ${ff(probe.fastestSpeed(), 1)} m/s over the deepest column; first baroclinic ${ff(baroclinic, 3)} m/s).`);
  log(`  Reference: RK4 at Δt = ${ff(refPlan.dt, 3)} s (${ff(refPlan.dt / limit, 3)} × limit, ${refPlan.steps} steps), ${ff(refSeconds, 1)} s with its check run; ` +
    `its own error (RK4 at 2Δt, Richardson): thickness ${fx(ref.floor.thickness)}, surface ${fx(ref.floor.surface)}.`);
  log(`  Courant numbers at 100 × limit (Δt ${ff(100 * limit, 0)} s), flow speed up to ${ff(Math.max(b0.maxSpeed, b1.maxSpeed), 3)} m/s: barotropic ${ff(courant100.barotropic, 1)}, ` +
    `first baroclinic ${ff(courant100.baroclinic, 2)}, advection ${ff(courant100.advection, 2)}.`);
  log("  Errors in the sweep study's norms against it (solver/studies/metrics.ts): thickness = ‖h − h_ref‖/‖h_ref − h_rest‖ over all layers,");
  log("  surface = ‖η − η_ref‖/‖η_ref − η_rest‖ (both relative, area-weighted), and η − η_ref as an area-weighted RMS in metres.");
  log("  φ/step and matvecs/step: per ordinary step (2nd to last); matvecs count the shifted solves in multiply-add equivalents, the first step's (with the");
  log("  factorizations) are in the JSON (firstStepMatvecs). Volume drift: largest |V_k − V_k(0)|/V_k(0) of any layer after any step.");
  log(`  Times: ${rounds} round${rounds > 1 ? "s" : ""}, rows alternating, each on a fresh model; best / median. set-up = building the stepper + its first step − one ordinary step.`);

  const rows: RowResult[] = [];
  const known = new Set(methodNames());
  const plan: { label: string; spec: Record<string, unknown>; family: string; factor: number; dt: number; steps: number }[] = [];
  const rk4Steps = stepsFor(0.95 * limit, Math.ceil);
  plan.push({ label: "rk4", spec: { method: "rk4" }, family: "explicit", factor: DAY / rk4Steps / limit, dt: DAY / rk4Steps, steps: rk4Steps });
  for (const c of candidates(cutoff, quick)) {
    if (!known.has(c.spec.method as string)) continue;
    for (const f of c.factors) {
      const steps = stepsFor(f * limit, Math.round);
      const dt = DAY / steps;
      const label = defaultLabel(c.spec).replace(/;filter=\{[^}]*\}/, `;cutoff=${cutoff.toExponential(2)}/s`);
      plan.push({ label, spec: c.spec, family: getMethod(c.spec.method as string).family ?? "", factor: dt / limit, dt, steps });
    }
  }
  for (const p of plan) rows.push({ ...p, status: "completed", samples: [], thicknessError: null, surfaceError: null, surfaceRmsMetres: null, maxVolumeDrift: null, phiActionsPerStep: 0, matvecsPerStep: 0, firstStepMatvecs: 0 });
  for (let r = 0; r < rounds; r++) {
    for (const row of rows) {
      if (row.status !== "completed") continue; // refused or unstable rows are not timed again
      let res: ReturnType<typeof runRow>;
      try {
        res = runRow(freshBuilt(sc, startFile), row.spec, row.dt, row.steps, r === 0 ? ref.state : null);
      } catch (e) {
        row.status = "refused";
        row.reason = (e as Error).message;
        continue;
      }
      if (res.unstable) {
        row.status = "unstable";
        row.reason = `step ${res.unstable.step} (t = ${ff(res.unstable.time, 0)} s): ${res.unstable.reason}`;
        row.maxVolumeDrift = res.drift;
        continue;
      }
      row.samples.push(res.sample);
      if (r === 0) {
        row.thicknessError = res.errors!.thickness;
        row.surfaceError = res.errors!.surface;
        row.surfaceRmsMetres = res.errors!.rms;
        row.maxVolumeDrift = res.drift;
        row.phiActionsPerStep = res.phiActionsPerStep;
        row.matvecsPerStep = res.matvecsPerStep;
        row.firstStepMatvecs = res.firstStepMatvecs;
      }
    }
  }

  const rk4 = rows[0];
  const best = (row: RowResult, k: keyof Sample) => summary(row.samples.map((s) => s[k]));
  const rk4Step = rk4.samples.length ? best(rk4, "steppingSecondsPerDay") : null;
  const rk4Total = rk4.samples.length ? best(rk4, "totalSecondsPerDay") : null;
  const speedup = (row: RowResult) => {
    if (!rk4Step || !rk4Total || !row.samples.length) return null;
    const s = best(row, "steppingSecondsPerDay"), t = best(row, "totalSecondsPerDay");
    return { stepping: rk4Step.best / s.best, steppingMedian: rk4Step.median / s.median, total: rk4Total.best / t.best, totalMedian: rk4Total.median / t.median };
  };

  log("  stepper (options)                                  × lim   Δt [s]  status     set-up [s]     stepping [s/day]   total [s/day]    speed-up stepping / total [×]  thick. err  surf. err  surf. RMS [m]  vol. drift  φ/step  matvecs/step");
  const out: Record<string, unknown>[] = [];
  for (const row of rows) {
    const head = `  ${row.label.padEnd(50)} ${ff(row.factor, row.factor < 10 ? 2 : 1).padStart(5)}  ${ff(row.dt, 1).padStart(7)}  ${row.status.padEnd(9)}`;
    if (row.status === "refused") { log(`${head}  ${row.reason}`); out.push({ label: row.label, factor: round(row.factor), dt: round(row.dt), status: row.status, reason: row.reason }); continue; }
    if (row.status === "unstable" && !row.samples.length) {
      log(`${head}  ${row.reason}`);
      out.push({ label: row.label, factor: round(row.factor), dt: round(row.dt), status: row.status, reason: row.reason });
      continue;
    }
    const su = best(row, "setupSeconds"), sp = best(row, "steppingSecondsPerDay"), to = best(row, "totalSecondsPerDay");
    const v = speedup(row)!;
    const pair = (t: { best: number; median: number }, dd: number) => `${ff(t.best, dd)} / ${ff(t.median, dd)}`;
    log(`${head}  ${pair(su, 2).padStart(13)}  ${pair(sp, 3).padStart(17)}  ${pair(to, 3).padStart(15)}   ${`${ff(v.stepping, 1)} (${ff(v.steppingMedian, 1)}) / ${ff(v.total, 1)} (${ff(v.totalMedian, 1)})`.padStart(28)}  ` +
      `${fx(row.thicknessError).padStart(10)}  ${fx(row.surfaceError).padStart(9)}  ${fx(row.surfaceRmsMetres).padStart(13)}  ${fx(row.maxVolumeDrift, 1).padStart(10)}  ${ff(row.phiActionsPerStep, 2).padStart(6)}  ${ff(row.matvecsPerStep, 1).padStart(12)}`);
    out.push({
      label: row.label, spec: row.spec, family: row.family, factor: round(row.factor), dt: round(row.dt), steps: row.steps, status: row.status,
      setupSeconds: { best: round(su.best), median: round(su.median) },
      steppingSecondsPerDay: { best: round(sp.best), median: round(sp.median) },
      totalSecondsPerDay: { best: round(to.best), median: round(to.median) },
      speedup: { stepping: round(v.stepping), steppingMedian: round(v.steppingMedian), total: round(v.total), totalMedian: round(v.totalMedian) },
      thicknessError: row.thicknessError, surfaceError: row.surfaceError, surfaceRmsMetres: row.surfaceRmsMetres,
      maxVolumeDrift: row.maxVolumeDrift, phiActionsPerStep: round(row.phiActionsPerStep), matvecsPerStep: round(row.matvecsPerStep), firstStepMatvecs: round(row.firstStepMatvecs),
    });
  }

  // the goals, each on the measured rows
  const completed = rows.filter((r) => r !== rk4 && r.status === "completed" && r.samples.length);
  const accurate = completed.filter((r) => r.thicknessError !== null && r.thicknessError <= GOAL_THICKNESS_ERROR);
  const fastest = (list: RowResult[]) => list.reduce<RowResult | null>((a, r) => (!a || speedup(r)!.stepping > speedup(a)!.stepping ? r : a), null);
  const describe = (r: RowResult) => {
    const v = speedup(r)!;
    return `${r.label} @ ${ff(r.factor, 1)}×: ${ff(v.stepping, 1)}× faster on stepping (median ${ff(v.steppingMedian, 1)}×), ` +
      `${ff(v.total, 1)}× with its ${ff(best(r, "setupSeconds").best, 2)} s set-up in a one-day run, at thickness error ${fx(r.thicknessError)} (surface ${fx(r.surfaceError)}, RMS ${fx(r.surfaceRmsMetres)} m)`;
  };
  const goals: { goal: string; met: boolean; metCountingSetup: boolean | null; figure: string }[] = [];
  const verdict = (met: boolean) => (met ? "MET" : "MISSED");
  const goal = (name: string, r: RowResult | null, need: number, none: string) => {
    if (!r) { goals.push({ goal: name, met: false, metCountingSetup: false, figure: none }); return; }
    const v = speedup(r)!;
    goals.push({ goal: name, met: v.stepping >= need, metCountingSetup: v.total >= need, figure: describe(r) });
  };
  goal(`best stepper ≥ 20× faster than RK4, thickness error ≤ ${GOAL_THICKNESS_ERROR}`, fastest(accurate), 20, `no row completed with thickness error ≤ ${GOAL_THICKNESS_ERROR}`);
  goal(`best exponential stepper ≥ 5× faster than RK4, thickness error ≤ ${GOAL_THICKNESS_ERROR}`, fastest(accurate.filter((r) => r.family === "exponential")), 5,
    `no exponential row completed with thickness error ≤ ${GOAL_THICKNESS_ERROR}`);
  const split = completed.find((r) => r.spec.method === "split-explicit");
  goal("split-explicit at 20× the RK4 Δt ≥ 8× faster than RK4", split ?? null, 8,
    `split-explicit at 20×: ${rows.find((r) => r.spec.method === "split-explicit")?.reason ?? "not run"}`);
  const twoModes = (r: RowResult) => r.spec.linear === "rest" || Number(/^modes:(\d+)$/.exec(String(r.spec.linear))?.[1] ?? 0) >= 2;
  const long = completed.filter((r) => r.factor >= 100 && twoModes(r) && r.maxVolumeDrift !== null && r.maxVolumeDrift <= EXACT_VOLUME);
  // cheapest first; up to CHECK_ROWS are checked for slow growth of grid-scale noise over CHECK_STEPS steps
  long.sort((a, b) => best(a, "steppingSecondsPerDay").best - best(b, "steppingSecondsPerDay").best);
  const checks: { label: string; factor: number; growth: number; rk4Growth?: number; passed: boolean; reason?: string }[] = [];
  let stable: RowResult | null = null;
  // in an unstable flow noise also grows in the true solution: above CHECK_GROWTH, RK4 near its limit over the same time sets the bar
  const rk4Growth = new Map<number, number>();
  const physical = (seconds: number) => {
    if (!rk4Growth.has(seconds)) rk4Growth.set(seconds, perturbationGrowth(freshBuilt(sc, startFile), { method: "rk4" }, rk4.dt, Math.round(seconds / rk4.dt)).growth);
    return rk4Growth.get(seconds)!;
  };
  for (const r of long.slice(0, CHECK_ROWS)) {
    const g = perturbationGrowth(freshBuilt(sc, startFile), r.spec, r.dt, CHECK_STEPS);
    const base = Number.isFinite(g.growth) && g.growth > CHECK_GROWTH ? physical(CHECK_STEPS * r.dt) : null;
    const pass = g.growth <= CHECK_GROWTH * Math.max(1, base ?? 1);
    checks.push({ label: r.label, factor: round(r.factor), growth: g.growth, ...(base !== null ? { rk4Growth: base } : {}), passed: pass, ...(g.reason ? { reason: g.reason } : {}) });
    log(`  stability check, ${CHECK_STEPS} steps (${ff((CHECK_STEPS * r.dt) / DAY, 1)} d) with and without seeded noise (1e-6 H; passes if it grows ≤ ${CHECK_GROWTH}× ` +
      `or ≤ ${CHECK_GROWTH}× its growth under RK4): ${r.label} @ ${ff(r.factor, 1)}×: ` +
      (Number.isFinite(g.growth) ? `noise grew ${fx(g.growth)}×${base !== null ? ` (under RK4 at ${ff(rk4.factor, 2)} × limit: ${fx(base)}×)` : ""} — ${pass ? "passes" : "fails"}` : `blew up, ${g.reason}`));
    if (pass) { stable = r; break; }
  }
  const check = stable ? checks[checks.length - 1] : null;
  goals.push({
    goal: "a stepper stable at ≥ 100× the RK4 Δt (two fast modes implicit or exponential), layer volumes exact",
    met: stable !== null, metCountingSetup: null,
    figure: stable
      ? `${stable.label} @ ${ff(stable.factor, 1)}× (Δt ${ff(stable.dt, 0)} s): one day completed, layer-volume drift ${fx(stable.maxVolumeDrift, 1)} (≤ ${EXACT_VOLUME}), ` +
        `seeded noise grew ${fx(check!.growth)}× over ${CHECK_STEPS} steps${check!.rk4Growth !== undefined ? ` (${fx(check!.rk4Growth)}× under RK4)` : ""}, thickness error ${fx(stable.thicknessError)}`
      : long.length
        ? `${long.length} row${long.length === 1 ? "" : "s"} with two or more modes in the linear part completed one day at ≥ 100× with exact volumes, but none of the ${checks.length} checked kept seeded noise from growing`
        : "no row with two or more modes in the linear part completed at ≥ 100× with exact volumes",
  });
  log(`  Goals (${sc.name}; verdict on stepping cost per simulated day, set-up apart; the one-day total beside it):`);
  for (const g of goals) {
    log(`  - ${g.goal}: ${g.figure} — ${verdict(g.met)}${g.metCountingSetup === null ? "" : g.metCountingSetup === g.met ? "" : ` (${verdict(g.metCountingSetup)} counting set-up in a one-day run)`}`);
  }
  return {
    scenario: sc.name, start: sc.start ?? "scenario initial state", rk4DtLimit: round(limit), rationalDampedCutoff: round(cutoff),
    courantAt100: { barotropic: round(courant100.barotropic), baroclinic: round(courant100.baroclinic), advection: round(courant100.advection) },
    reference: { method: "rk4", dt: round(refPlan.dt), steps: refPlan.steps, wallSeconds: round(refSeconds), ownError: { thickness: ref.floor.thickness, surface: ref.floor.surface } },
    rounds, rows: out, goals, stabilityChecks: checks,
  };
}

/**
 * `npm run bench -- --section benchmarkGoals [--goal-scenarios a,b] [--rounds N]`: the benchmark goals on
 * shelf-gyre-basin and eddying-jets (with 2 rounds about 4 and 3 minutes of CPU time, the stability checks included).
 */
export const goalsSection: BenchSection = {
  key: "benchmarkGoals",
  run({ log, quick, argv }) {
    const pick = argv.indexOf("--goal-scenarios");
    const names = pick >= 0 ? (argv[pick + 1] ?? "").split(",").filter(Boolean) : GOAL_SCENARIOS.map((s) => s.name);
    const unknown = names.filter((n) => !GOAL_SCENARIOS.some((s) => s.name === n));
    if (!names.length || unknown.length) throw new Error(`--goal-scenarios: must be a comma-separated list of ${GOAL_SCENARIOS.map((s) => s.name).join(", ")}`);
    const ri = argv.indexOf("--rounds");
    const rounds = ri >= 0 ? Number(argv[ri + 1]) : quick ? 1 : 2;
    if (!(Number.isInteger(rounds) && rounds >= 1 && rounds <= 10)) throw new Error("--rounds: must be a whole number from 1 to 10");
    const wall = argv.includes("--wall");
    now = wall ? () => performance.now() / 1000 : () => cpuClock() / 1000;
    log(`Timed by ${wall ? "the wall clock (--wall)" : "this process's CPU time (--wall for the wall clock)"}.`);
    const result: Record<string, unknown> = { clock: wall ? "wall" : "cpu" };
    for (const sc of GOAL_SCENARIOS.filter((s) => names.includes(s.name))) {
      result[sc.name] = runScenario(sc, log, quick, rounds);
      log("");
    }
    return result;
  },
};
