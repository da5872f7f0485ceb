import { useCallback, useEffect, useMemo, useRef, useState } from "react";
import { schemeTableau10 } from "d3";
import { failureMessage, SolverClient } from "../../workers/client.js";
import type { ChunkReport, FieldKind, MapView, StepperSpec } from "../../workers/protocol.js";
import { transpile } from "../code/transpile.js";
import { moduleKey } from "../code/userCode.js";
import { fmt, formatDays } from "../format.js";
import { buildRaster, mapFrame } from "../map/raster.js";
import { colourDomain } from "../map/palette.js";
import { ColourBar } from "../panels/ColourBar.js";
import { SeriesPlot } from "../panels/BudgetPlot.js";
import { STEP_TIMEOUT_MS, type Sandbox } from "../useSandbox.js";
import { CompareMap } from "./CompareMap.js";

/**
 * Side by side: 2–4 steppers on the same scenario, each in its own solver worker, advanced in lock-step of
 * simulated time (every worker reaches the same target time, to within one of its own steps, before the target
 * moves on). One map per stepper on a shared colour scale, the difference A − B on its own diverging scale,
 * the energy-budget residual and layer-volume drift of each, and each one's cost, live. A stepper that blows up
 * or stops answering stops alone.
 */
const CODE = "\u0000code";
const MAX_LANES = 4;
const MAP_W = 300;
const MAP_H = 230;
const HISTORY = 2000;

interface Choice { key: string; method: string; dt: string }

interface Frame { values: Float32Array; min: number; max: number; time: number }

interface Lane {
  title: string;
  spec: StepperSpec;
  client: SolverClient;
  status: "starting" | "ready" | "failed";
  message: string;
  time: number;
  steps: number;
  values: Float32Array | null;
  min: number;
  max: number;
  /** The frame at the last lock-step target this stepper reached (what the maps and the difference show). */
  shown: Frame | null;
  /** The frame at the current target, shown once every stepper still running has reached it. */
  pending: Frame | null;
  marked: number;
  mass0: number[];
  wallMs: number;
  counters: ChunkReport["counters"] | null;
  residual: number;
  drift: number;
  /** Per round of the lock-step: |residual| and the largest layer-volume drift. */
  residualSeries: number[];
  driftSeries: number[];
}

function laneDrift(l: Lane, rep: ChunkReport): number {
  let d = 0;
  rep.budget.mass.forEach((m, k) => { d = Math.max(d, Math.abs((m - l.mass0[k]) / l.mass0[k])); });
  return d;
}

export function CompareView({ sb, onClose }: { sb: Sandbox; onClose: () => void }) {
  const setup = sb.setup!;
  const baseDt = setup.stepper.spec.dt;
  const [choices, setChoices] = useState<Choice[]>(() => [
    { key: "a", method: setup.stepper.spec.module ? CODE : setup.stepper.spec.method, dt: String(baseDt) },
    { key: "b", method: setup.stepper.spec.method === "ssprk3" ? "rk4" : "ssprk3", dt: String(baseDt) },
  ]);
  const [kind, setKind] = useState<FieldKind>("surface");
  const [pairAB, setPairAB] = useState<[number, number]>([0, 1]);
  const lanes = useRef<Lane[]>([]);
  const days = useRef<number[]>([]);
  const target = useRef(0);
  const [phase, setPhase] = useState<"setup" | "starting" | "running" | "paused">("setup");
  const running = useRef(false);
  const loopId = useRef(0);
  const [version, setVersion] = useState(0);
  const [error, setError] = useState("");
  const lastRender = useRef(0);
  const view: MapView = useMemo(() => ({ kind, layer: 0 }), [kind]);
  const viewRef = useRef(view);
  viewRef.current = view;

  const frame = useMemo(() => mapFrame(setup.outlines, MAP_W, MAP_H), [setup.outlines]);
  const raster = useMemo(() => buildRaster(setup.outlines, frame.width, frame.height, frame.scale), [setup.outlines, frame]);
  const info = setup.fields.find((f) => f.kind === kind) ?? setup.fields[0];

  const refresh = (force = false) => {
    const now = performance.now();
    if (force || now - lastRender.current > 150) { lastRender.current = now; setVersion((v) => v + 1); }
  };

  const disposeAll = () => {
    running.current = false;
    loopId.current++;
    for (const l of lanes.current) l.client.dispose();
    lanes.current = [];
  };
  useEffect(() => disposeAll, []);

  const accept = (l: Lane, rep: ChunkReport) => {
    // no buffer recycling here: a map may still be about to paint the previous frame
    l.values = rep.snapshot.values;
    l.min = rep.snapshot.min;
    l.max = rep.snapshot.max;
    l.time = rep.time;
    l.steps = rep.step;
    l.counters = rep.counters;
    l.wallMs += Math.max(0, rep.chunkMs - rep.budgetMs);
    l.residual = rep.energyBudget ? rep.energyBudget.residual : NaN;
    l.drift = laneDrift(l, rep);
    if (rep.unstable) {
      l.shown = { values: rep.snapshot.values, min: rep.snapshot.min, max: rep.snapshot.max, time: rep.time };
      l.status = "failed";
      l.marked = rep.unstable.cell;
      l.message = `blew up at step ${rep.unstable.step}, t = ${formatDays(rep.unstable.time)}: ${rep.unstable.reason} (layer ${rep.unstable.layer}, marked)`;
    }
  };

  const start = async () => {
    disposeAll();
    setError("");
    const scenario = sb.currentScenario();
    if (!scenario) return;
    const { stepper: _s, ...rest } = scenario;
    const raw = { ...rest, stepper: { method: "rk4", dt: baseDt } };
    let js: string | null = null;
    if (choices.some((c) => c.method === CODE)) {
      const code = sb.editorCode();
      const t = code ? transpile(code.source, code.language, code.name) : null;
      if (!code || !t) { setError("The code panel holds no stepper yet."); return; }
      if (!t.ok) { setError(`Your code has a syntax error at line ${t.line}, column ${t.column}: ${t.message}`); return; }
      js = t.code;
    }
    setPhase("starting");
    target.current = 0;
    days.current = [];
    const made: Lane[] = choices.map((c, i) => {
      const dt = Number(c.dt) > 0 ? Number(c.dt) : baseDt;
      const code = c.method === CODE ? sb.editorCode() : null;
      const same = c.method === setup.stepper.spec.method && !setup.stepper.spec.module;
      const spec = (code ? { module: moduleKey(code.name), method: "user-module", dt }
        : same ? { ...setup.stepper.spec, dt } : { method: c.method, dt }) as StepperSpec;
      const lane: Lane = {
        title: `${String.fromCharCode(65 + i)}: ${code ? `${code.name} (your code)` : c.method} at Δt = ${fmt(dt)} s`,
        spec, status: "starting", message: "starting…", time: 0, steps: 0, values: null, min: 0, max: 0, shown: null, pending: null, marked: -1,
        mass0: [], wallMs: 0, counters: null, residual: NaN, drift: 0, residualSeries: [], driftSeries: [],
        client: new SolverClient({
          callTimeoutMs: STEP_TIMEOUT_MS,
          onRestart: (reason) => {
            lane.client.dispose();
            if (lane.status !== "failed") { lane.status = "failed"; lane.message = `stopped: ${reason}; the worker was ended, the others go on`; }
            refresh(true);
          },
        }),
      };
      return lane;
    });
    lanes.current = made;
    refresh(true);
    await Promise.all(made.map(async (l) => {
      try {
        if (l.spec.module) await l.client.call((r) => r.loadModule(l.spec.module!, js!), 120_000);
        const res = await l.client.call((r) => r.init(raw, l.spec, viewRef.current), 120_000);
        l.mass0 = res.report.budget.mass;
        accept(l, res.report);
        l.shown = { values: res.report.snapshot.values, min: res.report.snapshot.min, max: res.report.snapshot.max, time: 0 };
        l.status = "ready";
        l.message = res.stepper.label;
      } catch (e) {
        l.status = "failed";
        l.message = `could not start: ${failureMessage(e)}`;
      }
    }));
    if (!made.some((l) => l.status === "ready")) { setPhase("setup"); setError("No stepper could be started."); refresh(true); return; }
    refresh(true);
    run();
  };

  const loop = async (id: number) => {
    while (running.current && id === loopId.current) {
      const live = lanes.current.filter((l) => l.status === "ready");
      if (!live.length) break;
      const T = target.current;
      const reached = await Promise.all(live.map(async (l) => {
        try {
          const rep = await l.client.call((r) => r.advanceUntil(T, viewRef.current));
          accept(l, rep);
          const there = rep.time + l.spec.dt > T * (1 + 1e-12) + 1e-9;
          if (there && l.status === "ready") l.pending = { values: rep.snapshot.values, min: rep.snapshot.min, max: rep.snapshot.max, time: rep.time };
          return l.status !== "ready" || there;
        } catch (e) {
          if (l.status === "ready") { l.status = "failed"; l.message = `stopped: ${failureMessage(e)}`; }
          return true;
        }
      }));
      if (id !== loopId.current) return;
      if (reached.every(Boolean)) {
        for (const l of lanes.current) if (l.status === "ready" && l.pending) { l.shown = l.pending; l.pending = null; }
        if (T > 0) {
          days.current.push(T / 86400);
          for (const l of lanes.current) {
            l.residualSeries.push(l.status === "ready" ? l.residual : NaN);
            l.driftSeries.push(l.status === "ready" ? l.drift : NaN);
          }
          if (days.current.length > HISTORY) {
            const keep = (a: number[]) => a.filter((_, j) => j % 2 === 0 || j === a.length - 1);
            days.current = keep(days.current);
            for (const l of lanes.current) { l.residualSeries = keep(l.residualSeries); l.driftSeries = keep(l.driftSeries); }
          }
        }
        // the next target: one step of the longest Δt among the live steppers
        target.current = T + Math.max(...lanes.current.filter((l) => l.status === "ready").map((l) => l.spec.dt), 1);
      }
      refresh();
    }
    if (id === loopId.current) { running.current = false; setPhase("paused"); refresh(true); }
  };

  const run = () => {
    if (running.current) return;
    running.current = true;
    setPhase("running");
    void loop(++loopId.current);
  };
  const pause = () => { running.current = false; loopId.current++; setPhase("paused"); refresh(true); };

  const close = useCallback(() => { disposeAll(); onClose(); }, [onClose]);

  // derived for drawing
  const ls = lanes.current;
  const shared = useMemo((): [number, number] => {
    let lo = Infinity, hi = -Infinity;
    // the steppers still running set the range (a blown-up state would wash the others out)
    const live = ls.filter((l) => l.shown && l.status !== "failed");
    for (const l of live.length ? live : ls.filter((x) => x.shown)) { lo = Math.min(lo, l.shown!.min); hi = Math.max(hi, l.shown!.max); }
    return colourDomain(info.scale, lo, hi);
  }, [version, info.scale]);
  const diff = useMemo(() => {
    const [ia, ib] = pairAB;
    const a = ls[ia], b = ls[ib];
    const av = a?.shown, bv = b?.shown;
    if (!av || !bv || av.values.length !== bv.values.length) return null;
    const out = new Float32Array(av.values.length);
    let lim = 0;
    for (let i = 0; i < out.length; i++) { out[i] = av.values[i] - bv.values[i]; lim = Math.max(lim, Math.abs(out[i])); }
    return { values: out, lim: lim || 1e-12, ta: av.time, tb: bv.time };
  }, [version, pairAB]);
  const residualSeries = useMemo(() => ls.map((l, i) => ({ name: l.title, colour: schemeTableau10[i], y: [...l.residualSeries] })), [version]);
  const driftSeries = useMemo(() => ls.map((l, i) => ({ name: l.title, colour: schemeTableau10[i], y: [...l.driftSeries] })), [version]);
  const daysNow = useMemo(() => [...days.current], [version]);

  const methodOptions = setup.methods.map((m) => m.name);
  const setChoice = (i: number, c: Partial<Choice>) => setChoices((cs) => cs.map((x, j) => (j === i ? { ...x, ...c } : x)));

  return (
    <div className="compare-overlay">
      <section className="card compare-view" data-testid="compare-view" aria-label="Side by side">
        <div className="card-head">
          <h2>Side by side on {setup.scenario.name}</h2>
          <button data-testid="compare-close" onClick={close}>Close</button>
        </div>
        <div className="compare-setup">
          {choices.map((c, i) => (
            <div key={c.key} className="compare-choice" data-testid={`compare-choice-${i}`}>
              <b>{String.fromCharCode(65 + i)}</b>
              <select data-testid={`compare-method-${i}`} value={c.method} disabled={phase !== "setup" && phase !== "paused"} onChange={(e) => setChoice(i, { method: e.target.value })}>
                {methodOptions.map((m) => <option key={m} value={m}>{m}</option>)}
                <option value={CODE}>your code (code panel)</option>
              </select>
              <label>Δt <input data-testid={`compare-dt-${i}`} size={6} value={c.dt} onChange={(e) => setChoice(i, { dt: e.target.value })} /> s</label>
              {choices.length > 2 && <button aria-label="Remove" onClick={() => setChoices((cs) => cs.filter((_, j) => j !== i))}>×</button>}
            </div>
          ))}
          {choices.length < MAX_LANES && (
            <button data-testid="compare-add" onClick={() => setChoices((cs) => [...cs, { key: `${Date.now()}`, method: "rk4", dt: String(baseDt) }])}>Add a stepper</button>
          )}
          <label>Field <select data-testid="compare-field" value={kind} onChange={(e) => setKind(e.target.value as FieldKind)}>
            {setup.fields.map((f) => <option key={f.kind} value={f.kind}>{f.label} [{f.unit}]</option>)}
          </select></label>
          <button className="primary" data-testid="compare-start" disabled={phase === "starting"} onClick={() => void start()}>{ls.length ? "Start again" : "Start"}</button>
          {ls.length > 0 && (phase === "running"
            ? <button data-testid="compare-pause" onClick={pause}>Pause</button>
            : <button data-testid="compare-run" disabled={phase === "starting"} onClick={run}>Run</button>)}
          <span className="hint" data-testid="compare-time">lock-step target t = {formatDays(target.current)}</span>
        </div>
        {error && <p className="notice error" data-testid="compare-error">{error}</p>}
        <div className="compare-maps">
          {ls.map((l, i) => (
            <figure key={i} className={`compare-lane ${l.status}`} data-testid={`compare-lane-${i}`} data-status={l.status} data-steps={l.steps} data-time={l.shown?.time ?? 0}>
              <figcaption><b>{l.title}</b><br /><span className="hint">map at {formatDays(l.shown?.time ?? 0)} · now {formatDays(l.time)}, {l.steps} steps · {l.message}</span></figcaption>
              <CompareMap outlines={setup.outlines} raster={raster} width={frame.width} height={frame.height} values={l.shown?.values ?? null}
                domain={shared} scale={info.scale} marked={l.marked} version={version} testid={`compare-map-${i}`} />
            </figure>
          ))}
          {ls.length > 0 && (
            <ColourBar scale={info.scale} min={shared[0]} max={shared[1]} unit={info.unit} label={`${info.label} (all maps)`} height={Math.min(frame.height + 40, 280)} />
          )}
        </div>
        {ls.length > 1 && (
          <div className="compare-diff">
            <figure data-testid="difference-map" data-ready={diff ? "yes" : "no"}>
              <figcaption>
                Difference{" "}
                <select data-testid="diff-a" value={pairAB[0]} onChange={(e) => setPairAB([Number(e.target.value), pairAB[1]])}>
                  {ls.map((_, i) => <option key={i} value={i}>{String.fromCharCode(65 + i)}</option>)}
                </select> −{" "}
                <select data-testid="diff-b" value={pairAB[1]} onChange={(e) => setPairAB([pairAB[0], Number(e.target.value)])}>
                  {ls.map((_, i) => <option key={i} value={i}>{String.fromCharCode(65 + i)}</option>)}
                </select>
                {diff && <span className="hint"> at t = {formatDays(diff.ta)} and {formatDays(diff.tb)}; largest |A − B| {fmt(diff.lim)} {info.unit}</span>}
              </figcaption>
              <div className="compare-diff-body">
                <CompareMap outlines={setup.outlines} raster={raster} width={frame.width} height={frame.height} values={diff?.values ?? null}
                  domain={[-(diff?.lim ?? 1), diff?.lim ?? 1]} scale="diverging" marked={-1} version={version} testid="difference-canvas" />
                <ColourBar scale="diverging" min={-(diff?.lim ?? 1)} max={diff?.lim ?? 1} unit={info.unit} label={`A − B, ${info.label.toLowerCase()}`} height={Math.min(frame.height + 40, 280)} />
              </div>
            </figure>
            <div className="compare-plots">
              <SeriesPlot title="Energy-budget residual of each stepper, |m⁵/s²|, log scale" testid="compare-residual-plot" days={daysNow} series={residualSeries} log unit="m⁵/s²" />
              <SeriesPlot title="Largest layer-volume drift |ΔV/V₀| of each stepper, log scale" testid="compare-drift-plot" days={daysNow} series={driftSeries} log unit="" />
            </div>
          </div>
        )}
        {ls.length > 0 && (
          <table className="compare-cost" data-testid="compare-cost">
            <thead><tr><th>stepper</th><th>wall time per simulated day</th><th>tendency evaluations / step</th><th>matvecs / step</th><th>inner products / step</th><th>state</th></tr></thead>
            <tbody>
              {ls.map((l, i) => {
                const c = l.counters;
                const per = (v: number | undefined) => (c && c.steps ? fmt((v ?? 0) / c.steps) : "—");
                return (
                  <tr key={i}>
                    <td>{l.title}</td>
                    <td>{l.time > 0 ? `${fmt(l.wallMs / 1000 / (l.time / 86400))} s` : "—"}</td>
                    <td>{per(c?.rhsEvaluations)}</td><td>{per(c?.matvecs)}</td><td>{per(c?.innerProducts)}</td>
                    <td data-testid={`compare-state-${i}`}>{l.status === "failed" ? "stopped" : l.status === "ready" ? (phase === "running" ? "running" : "paused") : l.status}</td>
                  </tr>
                );
              })}
            </tbody>
          </table>
        )}
      </section>
    </div>
  );
}
