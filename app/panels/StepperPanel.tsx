import { memo, useEffect, useState } from "react";
import type { MethodSummary, StepperSpec, WorkerFailure } from "../../workers/protocol.js";
import { fmt } from "../format.js";

interface StepperPanelProps {
  readonly methods: readonly MethodSummary[];
  readonly spec: StepperSpec;
  readonly note?: string;
  readonly rk4DtLimit: number;
  readonly running: boolean;
  readonly error: WorkerFailure | null;
  readonly onApply: (spec: StepperSpec) => Promise<boolean>;
}

/** Plain-words help for the option keys methods may list in the registry. */
const OPTION_HELP: Record<string, { label: string; help: string; kind: "text" | "number" | "json" }> = {
  linear: { label: "linear part", help: "which part of the tendency the method treats as its linear operator", kind: "text" },
  backend: { label: "backend", help: "how the matrix-function actions are computed", kind: "text" },
  tolerance: { label: "tolerance", help: "error tolerance of each matrix-function action", kind: "number" },
  substeps: { label: "sub-steps", help: "small steps of the fast part per full step", kind: "number" },
  filter: { label: "filter", help: "damping or averaging applied to the fast part", kind: "text" },
  tableau: { label: "tableau (JSON)", help: 'coefficients as { "a": [[], [..]], "b": [..], "c": [..], "order": p }', kind: "json" },
};

function optionHelp(key: string) {
  return OPTION_HELP[key] ?? { label: key, help: "method option (JSON value or text)", kind: "json" as const };
}

/** Text typed in a field → the value sent to the solver (which does the validating and names the field). */
function parseValue(text: string, kind: "text" | "number" | "json"): unknown {
  const t = text.trim();
  if (kind === "number") return t !== "" && Number.isFinite(Number(t)) ? Number(t) : t;
  if (kind === "json") {
    try { return JSON.parse(t); } catch { return t; }
  }
  return t;
}

function showValue(v: unknown): string {
  return typeof v === "string" ? v : v === undefined ? "" : JSON.stringify(v);
}

export const StepperPanel = memo(function StepperPanel(p: StepperPanelProps) {
  const [method, setMethod] = useState(p.spec.method);
  const [dt, setDt] = useState(String(p.spec.dt));
  const [options, setOptions] = useState<Record<string, string>>({});
  useEffect(() => {
    setMethod(p.spec.method);
    setDt(String(p.spec.dt));
    const o: Record<string, string> = {};
    for (const [k, v] of Object.entries(p.spec)) if (k !== "method" && k !== "dt" && k !== "label") o[k] = showValue(v);
    setOptions(o);
  }, [p.spec]);

  const entry = p.methods.find((m) => m.name === method);
  const dtNumber = Number(dt);
  const ratio = Number.isFinite(dtNumber) && p.rk4DtLimit > 0 ? dtNumber / p.rk4DtLimit : NaN;

  const apply = () => {
    const spec: Record<string, unknown> = { method, dt: dt.trim() !== "" && Number.isFinite(Number(dt)) ? Number(dt) : dt };
    for (const key of entry?.options ?? []) {
      const text = options[key];
      if (text !== undefined && text.trim() !== "") spec[key] = parseValue(text, optionHelp(key).kind);
    }
    void p.onApply(spec as StepperSpec);
  };

  const errField = p.error?.field ?? "";
  return (
    <section aria-label="Stepper" data-testid="stepper-panel">
      <form onSubmit={(e) => { e.preventDefault(); apply(); }}>
        <label className="field">
          <span>method</span>
          <select data-testid="method-select" value={method} onChange={(e) => setMethod(e.target.value)}>
            {p.methods.map((m) => <option key={m.name} value={m.name}>{m.name} · {m.family}, order {m.order}</option>)}
          </select>
        </label>
        {entry && <p className="hint" data-testid="method-description">{entry.description}</p>}
        <label className="field">
          <span>Δt [s]</span>
          <input data-testid="dt-input" value={dt} onChange={(e) => setDt(e.target.value)} inputMode="decimal" />
        </label>
        <p className="hint" data-testid="dt-ratio">
          {Number.isFinite(ratio) ? <>Δt is <b>{fmt(ratio, 3)}</b> × the RK4 limit ({fmt(p.rk4DtLimit, 4)} s)</> : "Δt must be a number"}
        </p>
        {errField === "stepper.dt" && <p className="field-error" data-testid="stepper-field-error">{p.error!.message}</p>}
        {(entry?.options ?? []).map((key) => {
          const h = optionHelp(key);
          return (
            <div key={key}>
              <label className="field">
                <span>{h.label}</span>
                {h.kind === "json" ? (
                  <textarea data-testid={`option-${key}`} rows={3} value={options[key] ?? ""} onChange={(e) => setOptions({ ...options, [key]: e.target.value })} />
                ) : (
                  <input data-testid={`option-${key}`} value={options[key] ?? ""} placeholder="method default" onChange={(e) => setOptions({ ...options, [key]: e.target.value })} />
                )}
              </label>
              <p className="hint">{h.help}</p>
              {errField.startsWith(`stepper.${key}`) && <p className="field-error">{p.error!.message}</p>}
            </div>
          );
        })}
        {entry && entry.options.length === 0 && <p className="hint">This method has no options.</p>}
        <button type="submit" data-testid="apply-stepper">{p.running ? "Apply between chunks" : "Apply (continues from the current state)"}</button>
      </form>
      {p.error && <p className="field-error" role="alert" data-testid="stepper-error">{p.error.message}</p>}
      {p.note && <p className="hint">Note: {p.note}</p>}
    </section>
  );
});
