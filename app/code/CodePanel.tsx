import { useCallback, useEffect, useRef, useState } from "react";
import { stepperTemplate } from "../../solver/time/template.js";
import { failureMessage } from "../../workers/client.js";
import type { StepperSpec } from "../../workers/protocol.js";
import type { AssessMessage, AssessRequest } from "../../workers/assess.worker.js";
import { fmt } from "../format.js";
import type { Sandbox } from "../useSandbox.js";
import { AssessTable, type AssessCard } from "./AssessTable.js";
import "./workbench.css";
import { CodeEditor, type CodeEditorHandle } from "./CodeEditor.js";
import { locateInSource, transpile, type CodeLanguage, type Transpiled } from "./transpile.js";
import { declaredName, isEditorModule, lastCode, loadCode, moduleKey, saveCode, type StepperCode } from "./userCode.js";

/** Worked examples served from public/steppers/ (written against the public interface only). */
const EXAMPLES = ["kutta3.ts", "leapfrog-raw.ts", "exp-euler-modes.ts", "split-triangle.ts"];
const TEMPLATE_NAME = "my-stepper";
const template = () => stepperTemplate(TEMPLATE_NAME, "stepwell/solver/api");
/** Simulated length of the assess runs started from the page [s] (the CLI's default is the scenario's duration). */
const ASSESS_DURATION = 6 * 3600;
const ASSESS_STABILITY_DURATION = 2 * 3600;

/** A Blob URL as the browser writes it (blob:<origin>/<uuid>). */
const BLOB_URL = /blob:https?:\/\/[^/\s]+\/[0-9a-f-]+/g;

type Message = { kind: "error" | "ok" | "info"; text: string } | null;

/**
 * "Your stepper": a code editor holding a stepper module, Apply (transpile, load into the simulation worker,
 * run from the current state), errors located in the user's lines, Assess in a background worker, and the
 * consent step for code that came with a link.
 */
export function CodePanel({ sb }: { sb: Sandbox }) {
  const editor = useRef<CodeEditorHandle>(null);
  const initial = useRef<StepperCode>(lastCode() ?? { name: TEMPLATE_NAME, language: "ts", source: template() });
  const [language, setLanguage] = useState<CodeLanguage>(initial.current.language);
  const [message, setMessage] = useState<Message>(null);
  const [dtText, setDtText] = useState("");
  const [optionsText, setOptionsText] = useState("");
  const [busy, setBusy] = useState(false);
  const [assessing, setAssessing] = useState<{ fraction: number; item: string } | null>(null);
  const [card, setCard] = useState<AssessCard | null>(null);
  const assessWorker = useRef<Worker | null>(null);
  /** The code that runs now: its transpile (for mapping positions) and its Blob URL. */
  const applied = useRef<{ origin: string; t: Transpiled; name: string } | null>(null);
  const textRef = useRef(initial.current.source);
  const langRef = useRef(language);
  langRef.current = language;
  const saveTimer = useRef<ReturnType<typeof setTimeout> | null>(null);

  const current = useCallback((): StepperCode => {
    const source = textRef.current;
    return { name: declaredName(source) ?? TEMPLATE_NAME, language: langRef.current, source };
  }, []);

  // the code goes with share links and exported scenarios once it is not the untouched template
  const publish = useCallback(() => {
    const c = current();
    sb.setShareCode(c, c.source !== template());
  }, [sb.setShareCode]);
  useEffect(publish, []);

  const onChange = useCallback((text: string) => {
    textRef.current = text;
    publish();
    if (saveTimer.current) clearTimeout(saveTimer.current);
    saveTimer.current = setTimeout(() => saveCode(current()), 400);
  }, []);

  const show = (text: string, at?: { line: number; column: number }) => {
    setMessage({ kind: "error", text });
    editor.current?.mark(at ? { ...at, message: text } : null);
  };

  /** A solver message about the applied code, with the Blob URL replaced by the place in the editor. */
  const locate = (msg: string) => {
    const a = applied.current;
    const hit = a ? locateInSource(msg, a.origin, a.t) : null;
    return hit ?? { text: msg.replace(/\(at blob:[^)]*\)/, "(at a place the browser did not report)"), line: 0, column: 0 };
  };

  const apply = useCallback(async (code: StepperCode, dtOverride?: number, linkOptions: Record<string, unknown> = {}) => {
    let options = linkOptions;
    setBusy(true);
    editor.current?.mark(null);
    try {
      const t = transpile(code.source, code.language, code.name);
      if (!t.ok) { show(`Syntax error at line ${t.line}, column ${t.column}: ${t.message}`, t); return; }
      saveCode(code);
      const key = moduleKey(code.name);
      let loaded;
      try {
        loaded = await sb.loadModule(key, t.code);
      } catch (e) {
        const msg = failureMessage(e);
        const m = /blob:[^\s()]+:(\d+):(\d+)/.exec(msg);
        show(`The module could not be loaded: ${msg.replace(BLOB_URL, "your code")}`, m ? t.toSource(Number(m[1]), Number(m[2])) : undefined);
        return;
      }
      applied.current = { origin: loaded.origin, t, name: loaded.name };
      const dt = dtOverride ?? (Number(dtText) > 0 ? Number(dtText) : sb.setup?.stepper.spec.dt ?? 60);
      if (!dtOverride && optionsText.trim()) {
        try {
          const o: unknown = JSON.parse(optionsText);
          if (!o || typeof o !== "object" || Array.isArray(o)) throw new Error("give an object, e.g. {\"alpha\": 0.6}");
          options = { ...(o as Record<string, unknown>), ...options };
        } catch (e) {
          show(`Options: ${failureMessage(e)}`);
          return;
        }
      }
      const spec = { ...options, module: key, method: "user-module", dt } as unknown as StepperSpec;
      const res = await sb.applyStepper(spec);
      if (!res) return; // the stepper error effect below shows it
      setMessage({ kind: "ok", text: `Applied "${loaded.name}" (declared order ${loaded.order}) at Δt = ${fmt(dt)} s; running from step ${sb.report?.step ?? 0}.` });
      sb.run();
    } finally {
      setBusy(false);
    }
  }, [sb, dtText, optionsText]);

  // a throwing create (stepper error) or step (run error), or a watchdog stop, shown here with the user's line
  useEffect(() => {
    const e = sb.stepperError;
    if (!e || !applied.current) return;
    const hit = locate(e.message);
    show(hit.line ? hit.text : e.message, hit.line ? hit : undefined);
  }, [sb.stepperError]);
  const runError = sb.notices.find((n) => n.testid === "run-error")?.text;
  const watchdog = sb.notices.find((n) => n.testid === "watchdog")?.text;
  useEffect(() => {
    if (!runError || !applied.current || !runError.includes(applied.current.origin)) return;
    const hit = locate(runError);
    show(hit.text, hit.line ? hit : undefined);
  }, [runError]);
  useEffect(() => { if (watchdog && /code panel/.test(watchdog)) setMessage({ kind: "error", text: watchdog }); }, [watchdog]);

  // code from a link: shown, never run until the user says so
  const link = sb.linkCode;
  useEffect(() => {
    if (!link) return;
    editor.current?.setText(link.code.source);
    setLanguage(link.code.language);
    setMessage({ kind: "info", text: "This link carries stepper code. It has not run: read it, then press “Run this code” to load it." });
  }, [link]);

  const openExample = async (file: string) => {
    if (file === "template") { editor.current?.setText(loadCode(TEMPLATE_NAME)?.source ?? template()); setLanguage("ts"); return; }
    try {
      const res = await fetch(`${import.meta.env.BASE_URL}steppers/${file}`);
      if (!res.ok) throw new Error(`HTTP ${res.status}`);
      const text = await res.text();
      editor.current?.setText(text);
      setLanguage(file.endsWith(".js") ? "js" : "ts");
      setMessage({ kind: "info", text: `Opened the example ${file}.` });
    } catch (e) {
      setMessage({ kind: "error", text: `The example ${file} could not be fetched: ${failureMessage(e)}` });
    }
  };

  const startAssess = () => {
    const code = current();
    const t = transpile(code.source, code.language, code.name);
    if (!t.ok) { show(`Syntax error at line ${t.line}, column ${t.column}: ${t.message}`, t); return; }
    const scenario = sb.currentScenario();
    if (!scenario) return;
    const w = new Worker(new URL("../../workers/assess.worker.ts", import.meta.url), { type: "module", name: "stepwell-assess" });
    assessWorker.current = w;
    setCard(null);
    setAssessing({ fraction: 0, item: "starting" });
    w.onmessage = (ev: MessageEvent<AssessMessage>) => {
      const m = ev.data;
      if (m.type === "progress") { setAssessing({ fraction: m.fraction, item: m.item }); return; }
      w.terminate();
      assessWorker.current = null;
      setAssessing(null);
      if (m.type === "done") { setCard(m.report as AssessCard); setMessage({ kind: "ok", text: "Assess finished: the report card is beside the code." }); }
      else {
        const hit = locateInSource(m.message, m.origin, t);
        show(`Assess failed: ${hit ? hit.text : m.message}`, hit ?? undefined);
      }
    };
    w.onerror = (ev) => { ev.preventDefault(); w.terminate(); assessWorker.current = null; setAssessing(null); show(`Assess failed: ${ev.message}`); };
    const { stepper: _s, ...rest } = scenario;
    const req: AssessRequest = {
      scenario: { ...rest, stepper: { method: "rk4", dt: scenario.stepper.dt } }, code: t.code, key: moduleKey(code.name),
      options: {}, duration: ASSESS_DURATION, stabilityDuration: ASSESS_STABILITY_DURATION,
    };
    w.postMessage(req);
  };
  const cancelAssess = () => {
    assessWorker.current?.terminate();
    assessWorker.current = null;
    setAssessing(null);
    setMessage({ kind: "info", text: "Assess cancelled." });
  };
  useEffect(() => () => assessWorker.current?.terminate(), []);

  const consent = async () => {
    if (!link) return;
    const spec = link.spec as (StepperSpec & Record<string, unknown>) | null;
    sb.dropLinkCode();
    const { module: _m, method: _x, dt, ...options } = spec ?? ({} as Record<string, unknown>);
    await apply(link.code, typeof dt === "number" ? dt : undefined, options);
  };

  const runningModule = isEditorModule(sb.setup?.stepper.spec);
  return (
    <section className="card code-panel" aria-label="Your stepper" data-testid="code-panel">
      <div className="card-head">
        <h2>Your stepper</h2>
        <span className="hint">A module written against <code>solver/api.ts</code>, in TypeScript or JavaScript. Ctrl-F searches, Ctrl-Z undoes.</span>
      </div>
      {link && (
        <div className="consent" data-testid="consent-banner">
          <span>This link carries stepper code “{link.code.name}”. Nothing of it has run.</span>
          <button className="primary" data-testid="consent-run-code" onClick={() => void consent()}>Run this code</button>
          <button onClick={sb.dropLinkCode}>Keep it in the editor only</button>
        </div>
      )}
      <div className="code-toolbar">
        <label>Open{" "}
          <select data-testid="code-example" value="" onChange={(e) => { if (e.target.value) void openExample(e.target.value); }}>
            <option value="">…</option>
            <option value="template">the template</option>
            {EXAMPLES.map((f) => <option key={f} value={f}>example: {f}</option>)}
          </select>
        </label>
        <label>Language{" "}
          <select data-testid="code-language" value={language} onChange={(e) => { setLanguage(e.target.value as CodeLanguage); langRef.current = e.target.value as CodeLanguage; publish(); }}>
            <option value="ts">TypeScript</option>
            <option value="js">JavaScript</option>
          </select>
        </label>
        <label>Δt{" "}
          <input data-testid="code-dt" size={7} placeholder={String(sb.setup?.stepper.spec.dt ?? "")} value={dtText} onChange={(e) => setDtText(e.target.value)} /> s
        </label>
        <label title="The module's declared options as JSON; left out: their defaults">Options{" "}
          <input data-testid="code-options" size={16} placeholder='{"alpha": 0.6}' value={optionsText} onChange={(e) => setOptionsText(e.target.value)} />
        </label>
        <button className="primary" data-testid="stepper-code-apply" disabled={busy || !sb.setup || !!link} onClick={() => void apply(current())}>Apply</button>
        {assessing
          ? <button data-testid="assess-cancel" onClick={cancelAssess}>Cancel assess</button>
          : <button data-testid="assess-button" disabled={!sb.setup || !!link} onClick={startAssess}>Assess</button>}
        <span className="hint" data-testid="step-timeout">one step may take at most {sb.stepTimeoutMs / 1000} s</span>
      </div>
      <div className={`code-message ${message?.kind ?? ""}`} data-testid="stepper-code-message" role={message?.kind === "error" ? "alert" : "status"}>
        {message ? message.text : runningModule ? "Your stepper is running." : "Apply runs this code from the current state; errors show here with their line."}
      </div>
      <div className="code-body">
        <CodeEditor ref={editor} initial={initial.current.source} onChange={onChange} />
        <aside className="assess-side">
          {assessing && (
            <div data-testid="assess-progress">
              <progress max={1} value={assessing.fraction} /> {Math.round(100 * assessing.fraction)} %
              <div className="hint">{assessing.item}</div>
            </div>
          )}
          {card ? <AssessTable card={card} /> : !assessing && <p className="hint">Assess measures the observed order, the largest stable Δt, the drift and the cost of this code, in a background worker.</p>}
        </aside>
      </div>
    </section>
  );
}
