import { memo, useEffect, useState } from "react";
import type {
  MethodSummary, OptionChoice, OptionDescription, OptionValue, StepperSpec, WorkerFailure,
} from "../../workers/protocol.js";
import { fmt } from "../format.js";

interface StepperPanelProps {
  readonly methods: readonly MethodSummary[];
  readonly spec: StepperSpec;
  /** Label and note of the stepper that is running now. */
  readonly label?: string;
  readonly note?: string;
  readonly rk4DtLimit: number;
  readonly running: boolean;
  readonly error: WorkerFailure | null;
  readonly onApply: (spec: StepperSpec) => Promise<boolean>;
}

/** The select entry that stands for a value from the spec that none of the choices has (e.g. a filter object from a file). */
const GIVEN = "\u0000given";

/** A choice's value → the value of its <option> element. */
const domValue = (v: OptionValue): string => (v === null ? "" : String(v));

function sameValue(a: unknown, b: OptionValue): boolean {
  return a === b || (typeof a === "number" && typeof b === "number" && Object.is(a, b));
}

function showValue(v: unknown): string {
  return typeof v === "string" ? v : v === undefined ? "" : JSON.stringify(v);
}

/** Field contents for the options of a method, from a spec (the running one) or from the defaults. */
function initialValues(options: readonly OptionDescription[], spec: Record<string, unknown> | undefined): Record<string, string> {
  const out: Record<string, string> = {};
  for (const o of options) {
    const raw = spec?.[o.key];
    if (o.kind === "select") {
      if (raw === undefined) out[o.key] = domValue(o.default);
      else out[o.key] = o.choices?.find((c) => sameValue(raw, c.value)) ? domValue(raw as OptionValue) : GIVEN;
    } else {
      out[o.key] = raw === undefined ? "" : showValue(raw);
    }
  }
  return out;
}

function findChoice(o: OptionDescription, text: string): OptionChoice | undefined {
  return o.choices?.find((c) => domValue(c.value) === text);
}

/** What the field of option `o` holds as a spec value; undefined = leave the key out. Invalid text goes as typed. */
function fieldValue(o: OptionDescription, text: string, given: Record<string, unknown>): unknown {
  let v: unknown;
  if (o.kind === "select") {
    if (text === GIVEN) return given[o.key];
    const c = findChoice(o, text);
    v = c ? c.value : text;
    if (v === null) return undefined;
  } else {
    const t = text.trim();
    if (t === "") return undefined;
    if (o.kind === "json") {
      try { return JSON.parse(t); } catch { return t; }
    }
    v = Number.isFinite(Number(t)) ? Number(t) : t;
  }
  return o.sameAsOmitted?.some((s) => sameValue(v, s)) ? undefined : v;
}

/** The value option `key` has in effect: the field's value, or the method default when the field leaves it out. */
function effectiveValue(options: readonly OptionDescription[], values: Record<string, string>, given: Record<string, unknown>, key: string): unknown {
  const o = options.find((x) => x.key === key);
  if (!o) return undefined;
  const v = fieldValue(o, values[key] ?? "", given);
  return v === undefined ? o.default : v;
}

/** The first conflict of a choice with the current values of the other options, as a short text and a reason. */
function activeConflict(c: OptionChoice, options: readonly OptionDescription[], values: Record<string, string>, given: Record<string, unknown>) {
  for (const k of c.conflicts ?? []) {
    const now = effectiveValue(options, values, given, k.key);
    if (k.values.some((v) => sameValue(now, v))) return { short: `not with ${k.key}: ${showValue(now)}`, reason: k.reason };
  }
  return undefined;
}

function boundsText(o: OptionDescription): string {
  if (o.min === undefined && o.max === undefined) return "";
  const lo = o.min === undefined ? "" : `${o.exclusive ? ">" : "≥"} ${o.min}`;
  const hi = o.max === undefined ? "" : `${o.exclusive ? "<" : "≤"} ${o.max}`;
  return [lo, hi].filter(Boolean).join(" and ");
}

export const StepperPanel = memo(function StepperPanel(p: StepperPanelProps) {
  const [method, setMethod] = useState(p.spec.method);
  const [dt, setDt] = useState(String(p.spec.dt));
  const [values, setValues] = useState<Record<string, string>>({});
  const choicesOf = (name: string) => p.methods.find((m) => m.name === name)?.choices ?? [];
  const given = p.spec as Record<string, unknown>;
  useEffect(() => {
    setMethod(p.spec.method);
    setDt(String(p.spec.dt));
    setValues(initialValues(choicesOf(p.spec.method), p.spec as Record<string, unknown>));
  }, [p.spec, p.methods]);

  const entry = p.methods.find((m) => m.name === method);
  const options = entry?.choices ?? [];
  // values from the running spec only count while its method is the one picked
  const givenHere = method === p.spec.method ? given : {};
  const dtNumber = Number(dt);
  // never an impossible figure: no ratio for a Δt that is not a positive number of seconds
  const ratio = Number.isFinite(dtNumber) && dtNumber > 0 && p.rk4DtLimit > 0 ? dtNumber / p.rk4DtLimit : NaN;

  const pickMethod = (name: string) => {
    setMethod(name);
    setValues(initialValues(choicesOf(name), name === p.spec.method ? given : undefined));
  };

  const apply = () => {
    const spec: Record<string, unknown> = { method, dt: dt.trim() !== "" && Number.isFinite(Number(dt)) ? Number(dt) : dt };
    for (const o of options) {
      const v = fieldValue(o, values[o.key] ?? "", givenHere);
      if (v !== undefined) spec[o.key] = v;
    }
    void p.onApply(spec as StepperSpec);
  };

  const errField = p.error?.field ?? "";
  const errorFor = (key: string) => errField === `stepper.${key}` || errField.startsWith(`stepper.${key}.`);
  const set = (key: string, text: string) => setValues({ ...values, [key]: text });

  return (
    <section aria-label="Stepper" data-testid="stepper-panel">
      <form noValidate onSubmit={(e) => { e.preventDefault(); apply(); }}>
        <label className="field">
          <span>method</span>
          <select data-testid="method-select" value={method} onChange={(e) => pickMethod(e.target.value)}>
            {p.methods.map((m) => <option key={m.name} value={m.name}>{m.name} · {m.family}, order {m.order}</option>)}
          </select>
        </label>
        {entry && <p className="hint" data-testid="method-description">{entry.description}</p>}
        <label className="field">
          <span>Δt [s]</span>
          <input data-testid="dt-input" value={dt} onChange={(e) => setDt(e.target.value)} inputMode="decimal" />
        </label>
        <p className="hint" data-testid="dt-ratio">
          {Number.isFinite(ratio) ? <>Δt is <b>{fmt(ratio, 3)}</b> × the RK4 limit ({fmt(p.rk4DtLimit, 4)} s)</> : "Δt must be a positive number of seconds"}
        </p>
        {errField === "stepper.dt" && <p className="field-error" data-testid="stepper-field-error">{p.error!.message}</p>}
        {options.map((o) => {
          const text = values[o.key] ?? "";
          const picked = o.kind === "select" && text !== GIVEN ? findChoice(o, text) : undefined;
          const conflict = picked ? activeConflict(picked, options, values, givenHere) : undefined;
          return (
            <div key={o.key} data-testid={`option-field-${o.key}`}>
              <label className="field">
                <span>{o.label}</span>
                {o.kind === "select" ? (
                  <select data-testid={`option-${o.key}`} value={text} onChange={(e) => set(o.key, e.target.value)}>
                    {(o.choices ?? []).map((c) => {
                      const isDefault = sameValue(c.value, o.default);
                      const clash = activeConflict(c, options, values, givenHere);
                      const always = (c.conflicts ?? []).map((k) => k.reason).join("; ");
                      return (
                        <option key={domValue(c.value)} value={domValue(c.value)} title={[c.help, always].filter(Boolean).join(" — ")}
                          data-default={isDefault ? "yes" : undefined} data-conflict={clash ? "yes" : undefined}>
                          {c.label}{isDefault ? " (default)" : ""}{clash ? ` — ${clash.short}` : ""}
                        </option>
                      );
                    })}
                    {text === GIVEN && <option value={GIVEN}>as given: {showValue(givenHere[o.key])}</option>}
                  </select>
                ) : o.kind === "json" ? (
                  <textarea data-testid={`option-${o.key}`} rows={3} value={text} onChange={(e) => set(o.key, e.target.value)} />
                ) : (
                  <input data-testid={`option-${o.key}`} value={text} inputMode={o.kind === "integer" ? "numeric" : "decimal"}
                    placeholder={o.default === null ? "automatic" : `default ${o.default}`} onChange={(e) => set(o.key, e.target.value)} />
                )}
              </label>
              <p className="hint">
                {o.help}
                {o.kind === "integer" && " (whole number)"}
                {boundsText(o) && ` · ${boundsText(o)}`}
              </p>
              {picked?.help && <p className="hint choice-help" data-testid={`choice-help-${o.key}`}>{picked.value === null ? "" : `${picked.label}: `}{picked.help}</p>}
              {conflict && <p className="hint warning" data-testid={`option-conflict-${o.key}`}>{conflict.reason}; the solver will refuse this combination.</p>}
              {errorFor(o.key) && <p className="field-error" data-testid={`option-error-${o.key}`}>{p.error!.message}</p>}
            </div>
          );
        })}
        {entry && entry.options.length === 0 && <p className="hint">This method has no options.</p>}
        <button type="submit" data-testid="apply-stepper">{p.running ? "Apply between chunks" : "Apply (continues from the current state)"}</button>
      </form>
      {p.error && <p className="field-error" role="alert" data-testid="stepper-error">{p.error.message}</p>}
      {p.label && <p className="hint" data-testid="stepper-running-label">Running now: {p.label}</p>}
      {p.note && <p className="note" role="note" data-testid="stepper-note">Note: {p.note}</p>}
    </section>
  );
});
