import { memo, useEffect, useRef, useState } from "react";
import type { Scenario, WorkerFailure } from "../../workers/protocol.js";
import type { Builtin } from "../useSandbox.js";

interface ScenarioPanelProps {
  readonly scenario: Scenario;
  readonly builtins: readonly Builtin[];
  readonly error: WorkerFailure | null;
  readonly onApply: (raw: unknown) => Promise<boolean>;
  readonly onImport: (text: string, fileName: string) => Promise<boolean>;
  readonly onExport: () => void;
}

interface LayerDraft { thickness: string; density: string; name: string }
interface Draft {
  /** Text of each edited field keyed by its path in the scenario file (lengths in km where the label says so). */
  values: Record<string, string>;
  layers: LayerDraft[];
}

type Mesh = Scenario["mesh"];
const str = (v: number | undefined, scale = 1) => (v === undefined ? "" : String(v / scale));

function bounds(mesh: Mesh): { w: number; h: number } {
  if (mesh.type === "periodic-hex") return { w: 0, h: 0 };
  if (mesh.shape !== "polygon") return { w: mesh.width ?? 0, h: mesh.height ?? 0 };
  // a polygon basin's width and height, when given, stretch its outline (the solver does the stretching)
  const xs = (mesh.vertices ?? []).map((v) => v[0]);
  const ys = (mesh.vertices ?? []).map((v) => v[1]);
  return { w: mesh.width ?? Math.max(...xs) - Math.min(...xs), h: mesh.height ?? Math.max(...ys) - Math.min(...ys) };
}

function draftOf(s: Scenario): Draft {
  const v: Record<string, string> = {};
  const m = s.mesh;
  v["mesh.spacing"] = str(m.spacing, 1000);
  if (m.type === "periodic-hex") {
    v["mesh.cellsX"] = String(m.cellsX);
    v["mesh.cellsY"] = String(m.cellsY);
  } else {
    const b = bounds(m);
    v["mesh.width"] = str(b.w, 1000);
    v["mesh.height"] = str(b.h, 1000);
  }
  v["physics.f0"] = str(s.physics.f0);
  v["physics.beta"] = str(s.physics.beta);
  const w = s.physics.wind;
  if (!w || w.type === "zonal-cosine") v["physics.wind.amplitude"] = str(w?.amplitude);
  else { v["physics.wind.x"] = str(w.x); v["physics.wind.y"] = str(w.y); }
  v["physics.bottomDrag"] = str(s.physics.bottomDrag);
  v["physics.viscosity"] = str(s.physics.viscosity);
  return { values: v, layers: s.layers.map((l) => ({ thickness: String(l.thickness), density: String(l.density), name: l.name ?? "" })) };
}

/** Text → number when it is one; otherwise the text itself, so the solver's validation names the field. */
function num(text: string | undefined, scale = 1): unknown {
  const t = (text ?? "").trim();
  return t !== "" && Number.isFinite(Number(t)) ? Number(t) * scale : t;
}
const present = (text: string | undefined) => (text ?? "").trim() !== "";

/** The scenario file the draft describes. */
function compile(base: Scenario, d: Draft): Record<string, unknown> {
  const s = structuredClone(base) as unknown as Record<string, any>;
  const v = d.values;
  const m = s.mesh;
  m.spacing = num(v["mesh.spacing"], 1000);
  if (m.type === "periodic-hex") {
    m.cellsX = num(v["mesh.cellsX"]);
    m.cellsY = num(v["mesh.cellsY"]);
  } else {
    m.width = num(v["mesh.width"], 1000);
    m.height = num(v["mesh.height"], 1000);
  }
  s.layers = d.layers.map((l) => ({ thickness: num(l.thickness), density: num(l.density), ...(l.name.trim() ? { name: l.name.trim() } : {}) }));
  const p = s.physics;
  p.f0 = present(v["physics.f0"]) ? num(v["physics.f0"]) : 0;
  p.beta = present(v["physics.beta"]) ? num(v["physics.beta"]) : 0;
  if ("physics.wind.amplitude" in v) {
    if (present(v["physics.wind.amplitude"])) p.wind = { ...(p.wind ?? { type: "zonal-cosine" }), amplitude: num(v["physics.wind.amplitude"]) };
    else delete p.wind;
  } else {
    p.wind = { type: "uniform", x: num(v["physics.wind.x"]), y: num(v["physics.wind.y"]) };
  }
  for (const key of ["bottomDrag", "viscosity"]) {
    if (present(v[`physics.${key}`])) p[key] = num(v[`physics.${key}`]); else delete p[key];
  }
  return s;
}

function FieldError({ error, path }: { error: WorkerFailure | null; path: string }) {
  const f = error?.field;
  if (!f || !(f === path || f.startsWith(`${path}.`) || f.startsWith(`${path}[`))) return null;
  return <span className="field-error" data-testid="field-error" data-field={path}>{error!.message}</span>;
}

export const ScenarioPanel = memo(function ScenarioPanel(p: ScenarioPanelProps) {
  const [draft, setDraft] = useState<Draft>(() => draftOf(p.scenario));
  const fileRef = useRef<HTMLInputElement>(null);
  useEffect(() => setDraft(draftOf(p.scenario)), [p.scenario]);

  const set = (path: string) => (e: React.ChangeEvent<HTMLInputElement>) => setDraft({ ...draft, values: { ...draft.values, [path]: e.target.value } });
  const setLayer = (k: number, key: keyof LayerDraft) => (e: React.ChangeEvent<HTMLInputElement>) =>
    setDraft({ ...draft, layers: draft.layers.map((l, j) => (j === k ? { ...l, [key]: e.target.value } : l)) });
  const input = (path: string, label: string, unit: string) => (
    <label className="field" key={path}>
      <span>{label} <small>[{unit}]</small></span>
      <input data-testid={`input-${path}`} value={draft.values[path] ?? ""} onChange={set(path)} inputMode="decimal" />
      <FieldError error={p.error} path={path} />
    </label>
  );
  const m = p.scenario.mesh;
  const onFile = async (e: React.ChangeEvent<HTMLInputElement>) => {
    const file = e.target.files?.[0];
    if (!file) return;
    await p.onImport(await file.text(), file.name);
    if (fileRef.current) fileRef.current.value = "";
  };

  return (
    <section aria-label="Scenario" data-testid="scenario-panel">
      <label className="field">
        <span>built-in</span>
        <select data-testid="builtin-select" value={p.builtins.some((b) => b.name === p.scenario.name) ? p.scenario.name : ""}
          onChange={(e) => { const b = p.builtins.find((x) => x.name === e.target.value); if (b) void p.onApply(b.scenario); }}>
          {!p.builtins.some((b) => b.name === p.scenario.name) && <option value="">{p.scenario.name} (own)</option>}
          {p.builtins.map((b) => <option key={b.name} value={b.name}>{b.name}</option>)}
        </select>
      </label>
      <p className="hint">{p.scenario.description}</p>
      <form onSubmit={(e) => { e.preventDefault(); void p.onApply(compile(p.scenario, draft)); }}>
        <fieldset>
          <legend>Mesh ({m.type === "periodic-hex" ? "doubly periodic" : `closed basin, ${m.shape}`})</legend>
          <div className="row">
            {m.type === "periodic-hex" ? [input("mesh.cellsX", "cells east–west", "count"), input("mesh.cellsY", "cells north–south", "count")]
              : [input("mesh.width", "width", "km"), input("mesh.height", "height", "km")]}
            {input("mesh.spacing", "cell spacing", "km")}
          </div>
        </fieldset>
        <fieldset>
          <legend>Layers (top to bottom)</legend>
          <table className="grid-table layers">
            <thead><tr><th>#</th><th>thickness [m]</th><th>density [kg/m³]</th><th>name</th><th /></tr></thead>
            <tbody>
              {draft.layers.map((l, k) => (
                <tr key={k}>
                  <td>{k}</td>
                  <td><input data-testid={`input-layers[${k}].thickness`} value={l.thickness} onChange={setLayer(k, "thickness")} />
                    <FieldError error={p.error} path={`layers[${k}].thickness`} /></td>
                  <td><input data-testid={`input-layers[${k}].density`} value={l.density} onChange={setLayer(k, "density")} />
                    <FieldError error={p.error} path={`layers[${k}].density`} /></td>
                  <td><input value={l.name} onChange={setLayer(k, "name")} /></td>
                  <td><button type="button" aria-label={`remove layer ${k}`} disabled={draft.layers.length < 2}
                    onClick={() => setDraft({ ...draft, layers: draft.layers.filter((_, j) => j !== k) })}>−</button></td>
                </tr>
              ))}
            </tbody>
          </table>
          <button type="button" data-testid="add-layer" onClick={() => {
            const last = draft.layers[draft.layers.length - 1];
            setDraft({ ...draft, layers: [...draft.layers, { thickness: "500", density: String(Number(last?.density ?? 1025) + 0.5), name: "" }] });
          }}>+ layer</button>
          <FieldError error={p.error} path="layers" />
        </fieldset>
        <fieldset>
          <legend>Physics</legend>
          <div className="row">
            {input("physics.f0", "f₀", "1/s")}
            {input("physics.beta", "β", "1/(m s)")}
            {"physics.wind.amplitude" in draft.values ? input("physics.wind.amplitude", "wind stress peak", "N/m²")
              : [input("physics.wind.x", "wind stress east", "N/m²"), input("physics.wind.y", "wind stress north", "N/m²")]}
            {input("physics.bottomDrag", "bottom drag", "1/s")}
            {input("physics.viscosity", "viscosity", "m²/s")}
          </div>
        </fieldset>
        <div className="buttons">
          <button type="submit" data-testid="apply-scenario">Apply (restarts the run)</button>
          <button type="button" onClick={() => setDraft(draftOf(p.scenario))}>Undo edits</button>
        </div>
      </form>
      {p.error && <p className="field-error" role="alert" data-testid="scenario-error">{p.error.message}</p>}
      <div className="buttons">
        <label className="file-button">
          Import JSON… <input ref={fileRef} type="file" accept=".json,application/json" data-testid="scenario-import" onChange={onFile} />
        </label>
        <button type="button" data-testid="scenario-export" onClick={p.onExport}>Export JSON</button>
      </div>
    </section>
  );
});
