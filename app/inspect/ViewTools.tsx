import { useCallback, useEffect, useState } from "react";
import type { FieldInfo, MapView } from "../../workers/protocol.js";
import type { CellProbe } from "../../workers/probe.js";
import { failureMessage } from "../../workers/client.js";
import { colourDomain } from "../map/palette.js";
import { download, exportCanvas, exportSvg, fileStem } from "../export.js";
import { fmt, km, formatDays } from "../format.js";
import type { Sandbox } from "../useSandbox.js";

/**
 * Tools of the run view: the colour scale fixed or following the field, pause-and-inspect (every field at a
 * clicked cell), exports of the map (PNG) and of the plots beside it (SVG), and the keyboard shortcuts.
 */

interface Fixed { key: string; lo: number; hi: number }
const viewKey = (v: MapView) => `${v.kind}:${v.layer}`;

function isTyping(t: EventTarget | null): boolean {
  const el = t as HTMLElement | null;
  return !!el && (el.tagName === "INPUT" || el.tagName === "TEXTAREA" || el.tagName === "SELECT" || el.isContentEditable);
}

export function useViewTools(sb: Sandbox, fields: readonly FieldInfo[]) {
  const [fixed, setFixed] = useState<Fixed | null>(null);
  const [inspecting, setInspecting] = useState(false);
  const [pinned, setPinned] = useState<number | null>(null);
  const [probe, setProbe] = useState<CellProbe | null>(null);
  const [probeError, setProbeError] = useState<string | null>(null);
  const [showKeys, setShowKeys] = useState(true);
  const key = viewKey(sb.view);
  const colourRange: [number, number] | null = fixed && fixed.key === key ? [fixed.lo, fixed.hi] : null;
  const info = fields.find((f) => f.kind === sb.view.kind);

  /** Hold the colours at the range shown now, or let them follow the field again. */
  const toggleColour = useCallback(() => {
    if (colourRange) { setFixed(null); return; }
    const snap = sb.getSnapshot();
    if (!snap || !info) return;
    const [lo, hi] = colourDomain(info.scale, snap.min, snap.max);
    setFixed({ key, lo, hi });
  }, [colourRange, key, info, sb.getSnapshot]);

  const setRange = (lo: number, hi: number) => { if (Number.isFinite(lo) && Number.isFinite(hi) && hi > lo) setFixed({ key, lo, hi }); };

  const toggleInspect = useCallback(() => {
    setInspecting((on) => {
      if (!on && sb.running) sb.pause();
      if (on) { setPinned(null); setProbe(null); }
      return !on;
    });
  }, [sb.running, sb.pause]);

  const read = useCallback((cell: number) => {
    sb.probe(cell).then((p) => { setProbe(p); setProbeError(null); }, (e) => setProbeError(failureMessage(e)));
  }, [sb.probe]);
  const pick = useCallback((cell: number) => { setPinned(cell); read(cell); }, [read]);

  // running again ends the inspection; a step while inspecting refreshes the values
  useEffect(() => { if (sb.running && inspecting) { setInspecting(false); setPinned(null); setProbe(null); } }, [sb.running]);
  useEffect(() => { if (inspecting && pinned !== null && !sb.running) read(pinned); }, [sb.report?.step]);

  useEffect(() => {
    const onKey = (e: KeyboardEvent) => {
      if (isTyping(e.target) || e.ctrlKey || e.metaKey || e.altKey) return;
      if (e.key === "i" || e.key === "I") { e.preventDefault(); toggleInspect(); }
      else if (e.key === "f" || e.key === "F") { e.preventDefault(); toggleColour(); }
      else if (e.key === "Escape" && inspecting) { e.preventDefault(); toggleInspect(); }
      else if (e.key === "?") { e.preventDefault(); setShowKeys((v) => !v); }
    };
    window.addEventListener("keydown", onKey);
    return () => window.removeEventListener("keydown", onKey);
  }, [toggleInspect, toggleColour, inspecting]);

  return {
    colourRange, setRange, toggleColour, inspecting, toggleInspect, pinned: inspecting ? pinned : null, probe: inspecting ? probe : null, probeError,
    onPick: inspecting ? pick : undefined, showKeys, setShowKeys, info,
  };
}
export type ViewToolsState = ReturnType<typeof useViewTools>;

/** Plots beside the map that can be exported (found by their test ids; the set depends on the scenario). */
const PLOT_IDS = ["budget-terms-plot", "energy-plot", "mass-plot"];
const PLOT_NAMES: Record<string, string> = { "budget-terms-plot": "budget", "energy-plot": "energy residual", "mass-plot": "volume drift" };

function plotSvg(id: string): SVGSVGElement | null {
  const el = document.querySelector(`[data-testid="${id}"]`);
  if (!el) return null;
  return el instanceof SVGSVGElement ? el : el.querySelector("svg");
}

export const SHORTCUTS: [string, string][] = [
  ["Space", "run or pause"],
  ["S", "one step (paused)"],
  ["I", "inspect: pause, then click a cell"],
  ["Esc", "leave the inspector"],
  ["F", "fix the colour scale / follow the field"],
  ["?", "show or hide this list"],
];

export function ViewTools({ vt, view, running, sb }: { vt: ViewToolsState; view: MapView; running: boolean; sb: Sandbox }) {
  const [plots, setPlots] = useState<string[]>([]);
  const [ncError, setNcError] = useState<string | null>(null);
  const [startError, setStartError] = useState<string | null>(null);
  const startFromFile = async (f: File | undefined) => {
    if (!f) return;
    try {
      await sb.startFrom({ bytes: new Uint8Array(await f.arrayBuffer()), name: f.name });
      setStartError(null);
    } catch (e) {
      setStartError(failureMessage(e));
    }
  };
  const saveNetcdf = async () => {
    try {
      const bytes = await sb.netcdfSnapshot();
      const s = sb.currentScenario();
      download(new Blob([bytes as Uint8Array<ArrayBuffer>], { type: "application/x-netcdf" }), `${fileStem(s?.name ?? "run")}-step${sb.report?.step ?? 0}.nc`);
      setNcError(null);
    } catch (e) {
      setNcError(`NetCDF snapshot: ${failureMessage(e)}`);
    }
  };
  useEffect(() => {
    const scan = () => setPlots((old) => { const now = PLOT_IDS.filter((id) => plotSvg(id)); return now.join() === old.join() ? old : now; });
    scan();
    const t = setInterval(scan, 1000);
    return () => clearInterval(t);
  }, []);
  const unit = vt.info?.unit ?? "";
  return (
    <section className="card view-tools-card" aria-label="View tools" data-testid="view-tools">
      <div className="view-tools">
        <button data-testid="colour-toggle" onClick={vt.toggleColour} title="F" aria-pressed={!!vt.colourRange}>
          {vt.colourRange ? "Colours: fixed" : "Colours: follow field"}
        </button>
        {vt.colourRange && (
          <span data-testid="colour-range">
            from <input type="number" data-testid="colour-lo" step="any" value={vt.colourRange[0]} onChange={(e) => vt.setRange(Number(e.target.value), vt.colourRange![1])} />
            {" "}to <input type="number" data-testid="colour-hi" step="any" value={vt.colourRange[1]} onChange={(e) => vt.setRange(vt.colourRange![0], Number(e.target.value))} /> {unit}
          </span>
        )}
        <button data-testid="inspect-toggle" onClick={vt.toggleInspect} title="I" aria-pressed={vt.inspecting} className={vt.inspecting ? "primary" : ""}>
          {vt.inspecting ? "Inspecting (Esc ends)" : "Pause & inspect"}
        </button>
        <span className="export-buttons">
          <button data-testid="export-map-png" onClick={() => { const c = document.querySelector('[data-testid="map-canvas"]'); if (c instanceof HTMLCanvasElement) void exportCanvas(c, `map-${view.kind}${vt.info?.perLayer ? `-layer${view.layer}` : ""}`); }}>
            Map PNG
          </button>
          <button data-testid="export-netcdf" onClick={() => void saveNetcdf()} title="the current state as a one-record run file (UGRID, CF), readable by stepwell run --restart">NetCDF snapshot</button>
          {plots.map((id) => (
            <button key={id} data-testid={`export-${id}-svg`} onClick={() => { const s = plotSvg(id); if (s) exportSvg(s, id); }}>{PLOT_NAMES[id] ?? id} SVG</button>
          ))}
        </span>
      </div>
      <div className="view-tools">
        <label title="a Stepwell NetCDF run file of this mesh (stepwell run --netcdf, or the NetCDF snapshot above; its last record) or a spun-up state file (stepwell-state-1 JSON); it becomes the start">
          Start from a stored state (.nc, .json){" "}
          <input type="file" accept=".nc,.json,application/x-netcdf,application/json" data-testid="start-state-input" onChange={(e) => { void startFromFile(e.target.files?.[0]); e.target.value = ""; }} />
        </label>
        {sb.startInfo && (
          <span data-testid="start-state-info">
            Started from <b>{sb.startInfo.file}</b>{sb.startInfo.scenario ? ` (${sb.startInfo.scenario}, ` : " ("}stored at {formatDays(sb.startInfo.storedTime)}, step {sb.startInfo.storedStep}); Reset returns there.
          </span>
        )}
      </div>
      {startError && <p className="error" data-testid="start-state-error">{startError}</p>}
      {ncError && <p className="error" data-testid="export-error">{ncError}</p>}
      {vt.inspecting && (
        <div className="inspector" data-testid="inspector">
          {running ? null : vt.probe ? (
            <>
              <div data-testid="inspector-where">cell {vt.probe.cell} at x {km(vt.probe.x)}, y {km(vt.probe.y)} · step {vt.probe.step} · {formatDays(vt.probe.time)}</div>
              <table><tbody>
                {vt.probe.values.map((v) => (
                  <tr key={`${v.kind}-${v.layer}`} data-testid={`inspect-${v.kind}${v.layer === null ? "" : `-${v.layer}`}`}>
                    <td>{v.label}{v.layer === null ? "" : `, layer ${v.layer}`}</td><td><b>{fmt(v.value, 8)}</b> {v.unit}</td>
                  </tr>
                ))}
              </tbody></table>
            </>
          ) : <span>The run is paused. Click a cell on the map to read every field there.</span>}
          {vt.probeError && <p className="error">{vt.probeError}</p>}
        </div>
      )}
      {!vt.showKeys && <div className="shortcuts" data-testid="shortcut-hint">Press <kbd>?</kbd> for the keyboard shortcuts.</div>}
      {vt.showKeys && (
        <div className="shortcuts" data-testid="shortcut-list">
          <b>Keyboard</b>
          <ul>{SHORTCUTS.map(([k, what]) => <li key={k}><kbd>{k}</kbd> {what}</li>)}</ul>
        </div>
      )}
    </section>
  );
}
