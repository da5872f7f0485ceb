import type { UnstableInfo } from "../../workers/protocol.js";
import { fmt, formatDays, km } from "../format.js";
import type { Notice } from "../useSandbox.js";

interface NoticesProps {
  readonly notices: readonly Notice[];
  readonly unstable: UnstableInfo | null;
  readonly onDismiss: (id: number) => void;
}

/** Messages above the map: a blow-up report, worker restarts, unusable links, run errors. */
export function Notices({ notices, unstable, onDismiss }: NoticesProps) {
  return (
    <div className="notices" aria-live="polite">
      {unstable && (
        <div className="notice error" role="alert" data-testid="blowup-message"><span>
          <b>The run went unstable and was stopped.</b> Step {unstable.step}, t = {formatDays(unstable.time)} ({fmt(unstable.time)} s):{" "}
          {unstable.reason} in layer {unstable.layer} at {unstable.field === "thickness" ? "cell" : "edge"} {unstable.index}{" "}
          (x {km(unstable.x)}, y {km(unstable.y)}, marked on the map). Courant numbers: fast wave {fmt(unstable.courant.barotropic)},
          slow wave {fmt(unstable.courant.baroclinic)}, flow {fmt(unstable.courant.advection)}. The map shows the last good state;
          lower Δt and run again, or reset.
        </span></div>
      )}
      {notices.map((n) => (
        <div key={n.id} className={`notice ${n.kind}`} role={n.kind === "error" ? "alert" : "status"} data-testid={n.testid}>
          <span>{n.text}</span>
          <button className="dismiss" aria-label="Dismiss" onClick={() => onDismiss(n.id)}>×</button>
        </div>
      ))}
    </div>
  );
}
