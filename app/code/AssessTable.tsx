import { fmt } from "../format.js";

/** The part of the `assess` report card the table shows (solver/studies/assess.ts AssessReport). */
export interface AssessCard {
  stepper: { name: string; label: string; declaredOrder: number };
  scenario: string;
  order: { observed: number | null; scenario: string; reason?: string };
  stability: { maxStableDt: number; ratioToRk4: number; rk4DtLimit: number };
  conservation: { steps: number; massDrift: number; energyDrift: number | null; energyNote?: string };
  cost: { dt: number; secondsPerSimDay: number; rk4SecondsPerSimDay: number; rhsPerStep: number; matvecsPerStep: number; innerProductsPerStep: number };
  verdicts: { order: string; stability: string; mass: string; energy: string; cost: string };
}

/** The report card as a table: question, measured value, plain verdict. */
export function AssessTable({ card }: { card: AssessCard }) {
  const rows: [string, string, string][] = [
    ["observed order", card.order.observed === null ? `n/a${card.order.reason ? ` (${card.order.reason})` : ""}` : `${fmt(card.order.observed)} on ${card.order.scenario} (declared ${card.stepper.declaredOrder})`, card.verdicts.order],
    ["largest stable Δt", `${fmt(card.stability.maxStableDt)} s = ${fmt(card.stability.ratioToRk4)} × RK4 limit (${fmt(card.stability.rk4DtLimit)} s)`, card.verdicts.stability],
    ["layer-volume drift", `${fmt(card.conservation.massDrift, 2)} over ${card.conservation.steps} steps`, card.verdicts.mass],
    ["energy", card.conservation.energyDrift === null ? `n/a${card.conservation.energyNote ? ` (${card.conservation.energyNote})` : ""}` : `${fmt(card.conservation.energyDrift, 2)}${card.conservation.energyNote ? ` (${card.conservation.energyNote})` : ""}`, card.verdicts.energy],
    ["wall time per simulated day", `${fmt(card.cost.secondsPerSimDay)} s at Δt ${fmt(card.cost.dt)} s (RK4 ${fmt(card.cost.rk4SecondsPerSimDay)} s)`, card.verdicts.cost],
    ["work per step", `${fmt(card.cost.rhsPerStep)} tendency evaluations · ${fmt(card.cost.matvecsPerStep)} matvecs · ${fmt(card.cost.innerProductsPerStep)} inner products`, ""],
  ];
  return (
    <table className="assess-table" data-testid="assess-table">
      <caption>Report card: {card.stepper.label} on {card.scenario}</caption>
      <thead><tr><th>question</th><th>measured</th><th>verdict</th></tr></thead>
      <tbody>{rows.map(([q, m, v]) => <tr key={q}><td>{q}</td><td>{m}</td><td>{v}</td></tr>)}</tbody>
    </table>
  );
}
