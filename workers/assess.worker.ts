/**
 * The background worker of the code panel's "Assess": imports the user's module (a Blob URL), registers it and
 * runs the `assess` report card on the scenario, posting progress. Cancelling is ending this worker; it does
 * nothing else, so the simulation worker and the page stay free.
 */
import { assess } from "../solver/studies/assess.js";
import { buildScenario } from "../solver/scenario/build.js";
import { builtinScenario } from "../solver/scenario/builtins.js";
import { parseScenario } from "../solver/scenario/schema.js";
import { importUserModule, moduleUrl } from "./userModule.js";
import type { StepperConfig } from "../solver/studies/stability.js";

export interface AssessRequest {
  scenario: unknown;
  /** JavaScript of the user's module (types already stripped). */
  code: string;
  key: string;
  /** Stepper options besides the module key. */
  options: Record<string, unknown>;
  /** Length of the conservation and cost runs [s]. */
  duration: number;
  /** Simulated length of each stability trial [s]. */
  stabilityDuration: number;
}

export type AssessMessage =
  | { type: "progress"; fraction: number; item: string }
  | { type: "done"; report: unknown; origin: string }
  | { type: "error"; message: string; origin: string };

const post = (m: AssessMessage) => (self as unknown as Worker).postMessage(m);

self.onmessage = async (ev: MessageEvent<AssessRequest>) => {
  const q = ev.data;
  const origin = moduleUrl(q.code);
  try {
    await importUserModule(q.key, origin);
    const clock = () => performance.now() / 1000;
    let last = 0;
    const report = assess(buildScenario(parseScenario(q.scenario)), { ...q.options, module: q.key, method: "user-module" } as StepperConfig, {
      orderScenario: buildScenario(parseScenario(builtinScenario("ring-wave"))),
      duration: q.duration,
      stability: { duration: q.stabilityDuration },
      clock,
      onProgress: (p) => {
        const now = performance.now();
        if (now - last > 100) { last = now; post({ type: "progress", fraction: p.fraction, item: p.item }); }
      },
    });
    post({ type: "done", report, origin });
  } catch (e) {
    post({ type: "error", message: e instanceof Error ? e.message : String(e), origin });
  }
};
