import { useCallback, useEffect, useMemo, useState } from "react";
import { DriftPlots } from "./panels/DriftPlots.js";
import { FieldMap } from "./panels/FieldMap.js";
import { ModesTable } from "./panels/ModesTable.js";
import { Notices } from "./panels/Notices.js";
import { RunControls } from "./panels/RunControls.js";
import { ScenarioPanel } from "./panels/ScenarioPanel.js";
import { StepperPanel } from "./panels/StepperPanel.js";
import { useSandbox } from "./useSandbox.js";
import { CodePanel } from "./code/CodePanel.js";
import { withCode } from "./code/userCode.js";
import { CompareView } from "./compare/CompareView.js";
// studies, exports and view tools (one block, kept apart)
import { StudiesPanel } from "./studies/StudiesPanel.js";
import "./studies/studies.css";
import { useViewTools, ViewTools } from "./inspect/ViewTools.js";

type Tab = "stepper" | "scenario" | "modes";
const TABS: { id: Tab; label: string }[] = [
  { id: "stepper", label: "Stepper" },
  { id: "scenario", label: "Scenario" },
  { id: "modes", label: "Modes & limits" },
];

const NO_FIELDS: never[] = [];

function isTyping(t: EventTarget | null): boolean {
  const el = t as HTMLElement | null;
  return !!el && (el.tagName === "INPUT" || el.tagName === "TEXTAREA" || el.tagName === "SELECT" || el.isContentEditable);
}

export function App() {
  const sb = useSandbox();
  const [tab, setTab] = useState<Tab>("stepper");
  const [logScale, setLogScale] = useState(true);
  const [compareOpen, setCompareOpen] = useState(false);
  // view tools: colour scale fixed or following, pause-and-inspect, run-view exports, shortcut list
  const vt = useViewTools(sb, sb.setup?.fields ?? NO_FIELDS);

  // keyboard: space runs/pauses, s steps (not while typing in a field)
  useEffect(() => {
    const onKey = (e: KeyboardEvent) => {
      if (isTyping(e.target) || e.ctrlKey || e.metaKey || e.altKey) return;
      if (e.key === " ") { e.preventDefault(); sb.toggle(); }
      else if (e.key === "s" || e.key === "S") { e.preventDefault(); void sb.stepOnce(); }
    };
    window.addEventListener("keydown", onKey);
    return () => window.removeEventListener("keydown", onKey);
  }, [sb.toggle, sb.stepOnce]);

  const exportScenario = useCallback(() => {
    const s = sb.currentScenario();
    if (!s) return;
    const blob = new Blob([JSON.stringify(withCode(s, sb.shareCode()), null, 2)], { type: "application/json" });
    const a = document.createElement("a");
    a.href = URL.createObjectURL(blob);
    a.download = `${s.name}.json`;
    a.click();
    setTimeout(() => URL.revokeObjectURL(a.href), 1000);
  }, [sb.currentScenario]);

  const s = sb.setup;
  const layerNames = useMemo(() => (s ? s.scenario.layers.map((l) => l.name ?? "") : []), [s?.scenario]);
  return (
    <div className="app" data-testid="app" data-ready={s && !sb.loading ? "yes" : "no"}>
      <header>
        <h1>Stepwell <small>time-stepper sandbox</small></h1>
        <RunControls running={sb.running} ready={!!s && !sb.loading} time={sb.report?.time ?? 0} steps={sb.report?.step ?? 0}
          rates={sb.rates} label={s?.stepper.label ?? ""} onToggle={sb.toggle} onStep={() => void sb.stepOnce()} onReset={() => void sb.reset()} />
        <button data-testid="share-button" disabled={!s} onClick={sb.share}>Share link</button>
        <button data-testid="open-compare" disabled={!s || sb.loading} onClick={() => { sb.pause(); setCompareOpen(true); }}>Side by side</button>
      </header>
      {sb.shareUrl && (
        <div className="share-row" data-testid="share-row">
          <span>Link to this scenario and stepper (also copied to the clipboard when the browser allows):</span>
          <input data-testid="share-link" readOnly value={sb.shareUrl} onFocus={(e) => e.target.select()} aria-label="Share link" />
          <button onClick={sb.hideShare} aria-label="Hide the link">×</button>
        </div>
      )}
      <Notices notices={sb.notices} unstable={sb.unstable} onDismiss={sb.dismiss} />
      {!s ? (
        <p className="loading" data-testid="loading">Loading the scenario…</p>
      ) : (
        <main>
          <div className="left">
            <div className="scenario-title" data-testid="scenario-name">
              <b>{s.scenario.name}</b> · {s.description.nCells} cells · {s.description.nLayers} layers · {s.outlines.kind === "basin" ? "closed basin" : "doubly periodic"}
            </div>
            <FieldMap outlines={s.outlines} fields={s.fields} nLayers={s.description.nLayers} layerNames={layerNames}
              view={sb.view} onView={sb.setView} getSnapshot={sb.getSnapshot} snapshotVersion={sb.snapshotVersion} subscribeSnapshot={sb.subscribeSnapshot}
              unstable={sb.unstable} maxWidth={620} maxHeight={480}
              colourRange={vt.colourRange} onPick={vt.onPick} pinned={vt.pinned} />
            <ViewTools vt={vt} view={sb.view} running={sb.running} sb={sb} />
          </div>
          <div className="right">
            <DriftPlots samples={sb.history} layerNames={layerNames} logScale={logScale} onLogScale={setLogScale}
              courant={sb.report?.courant ?? null} dt={s.stepper.spec.dt} />
            <section className="card tabs">
              <div role="tablist">
                {TABS.map((t) => (
                  <button key={t.id} role="tab" aria-selected={tab === t.id} data-testid={`tab-${t.id}`} className={tab === t.id ? "active" : ""}
                    onClick={() => setTab(t.id)}>{t.label}</button>
                ))}
              </div>
              <div role="tabpanel" className="tab-body">
                {tab === "stepper" && (
                  <StepperPanel methods={s.methods} spec={s.stepper.spec} label={s.stepper.label} note={s.stepper.note} rk4DtLimit={s.description.rk4DtLimit}
                    running={sb.running} error={sb.stepperError} onApply={sb.applyStepper} />
                )}
                {tab === "scenario" && (
                  <ScenarioPanel scenario={s.scenario} builtins={sb.builtins} error={sb.scenarioError}
                    onApply={sb.applyScenario} onImport={sb.importScenario} onExport={exportScenario} />
                )}
                {tab === "modes" && <ModesTable description={s.description} methods={s.methods} dt={s.stepper.spec.dt} />}
              </div>
            </section>
          </div>
        </main>
      )}
      {s && <CodePanel sb={sb} />}
      {s && compareOpen && <CompareView sb={sb} onClose={() => setCompareOpen(false)} />}
      {/* studies: stability search, convergence sweep and work-precision, in a pool of workers */}
      {s && <StudiesPanel scenario={sb.currentScenario} scenarioName={s.scenario.name} outlines={s.outlines} />}
    </div>
  );
}
