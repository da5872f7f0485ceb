/**
 * End-to-end tests of the sandbox's workbench: the stepper code panel (apply, located errors, a stepper that
 * hangs), code carried by a link (nothing runs before consent), the side-by-side view, the energy-budget card,
 * and the page staying responsive while a worker is busy. Vite dev server + Debian's Chromium (harness.ts).
 * Responsiveness and frame figures are recorded in test-output/workbench-perf.json, never asserted as speed.
 */
import { mkdirSync, readFileSync, writeFileSync } from "node:fs";
import { cpus, loadavg } from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Page } from "playwright-core";
import { encodeSetup } from "../../app/share";
import { byId, openApp, ROOT, shot, startSandbox, type Sandbox } from "./harness";

let sb: Sandbox;
let page: Page;
const errors: string[] = [];
const perf: Record<string, unknown> = {};
beforeAll(async () => {
  sb = await startSandbox();
  page = await openApp(sb, "", errors);
});
afterAll(async () => {
  mkdirSync(path.join(ROOT, "test-output"), { recursive: true });
  writeFileSync(path.join(ROOT, "test-output", "workbench-perf.json"), JSON.stringify({ loadAverage1min: loadavg()[0], cpus: cpus().length, ...perf }, null, 2));
  await sb?.close();
});

let unique = 0;
/** A small doubly periodic two-layer ocean with a surface bump: 16 × 16 = 256 cells (RK4 limit about 29 s). */
function smallScenario(stepper: Record<string, unknown> = { method: "rk4", dt: 20 }, cells = 16) {
  return {
    name: "tiny-ring", description: `test scenario: a small ring wave (${++unique})`,
    mesh: { type: "periodic-hex", cellsX: cells, cellsY: cells, spacing: 20000 },
    layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
    initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
    stepper, duration: 86400,
  };
}
const link = (s: unknown) => `#${encodeSetup(s)}`;
const text = async (id: string) => (await page.locator(byId(id)).textContent()) ?? "";
const stepCount = async () => Number(await text("step-count"));

async function loadLink(hash: string, name = "tiny-ring") {
  await page.evaluate((h) => { window.location.hash = h; }, hash);
  await expect.poll(() => text("scenario-name"), { timeout: 60_000 }).toContain(name);
  await expect.poll(() => stepCount(), { timeout: 30_000 }).toBe(0);
}

/** Replace the editor's text (CodeMirror's content element takes input like a text field). */
async function setCode(code: string) {
  const content = page.locator(`${byId("stepper-code")} .cm-content`);
  await content.fill(code);
  await expect.poll(async () => (await content.innerText()).replace(/\s+/g, " ").trim()).toBe(code.replace(/\s+/g, " ").trim());
}

async function pause() {
  if ((await text("run-button")) === "Pause") await page.click(byId("run-button"));
  await expect.poll(() => text("run-button")).toBe("Run");
}

/** Explicit midpoint rule (Butcher 2016, Numerical Methods for ODEs, §23) written against the public interface. */
const MIDPOINT = [
  "export default {",
  "  name: \"page-midpoint\", order: 2, description: \"explicit midpoint rule\",",
  "  create(problem) {",
  "    const k = problem.newVector(), y = problem.newVector();",
  "    return {",
  "      step(x, t, dt) {",
  "        problem.tendency(k, x, t);",
  "        for (let i = 0; i < x.length; i++) y[i] = x[i] + 0.5 * dt * k[i];",
  "        problem.tendency(k, y, t + 0.5 * dt);",
  "        for (let i = 0; i < x.length; i++) x[i] += dt * k[i];",
  "      },",
  "    };",
  "  },",
  "};",
].join("\n");

describe("stepper code panel", () => {
  it("opens with the template, and a typed stepper applies and runs from the current state", async () => {
    await loadLink(link(smallScenario()));
    const editor = page.locator(`${byId("stepper-code")} .cm-content`);
    expect(await editor.innerText()).toContain("starter stepper module");
    expect(await page.locator(`${byId("stepper-code")} .cm-lineNumbers`).count()).toBe(1);
    // typing edits the code
    await setCode(MIDPOINT);
    await editor.click();
    await page.keyboard.press("Control+End");
    await page.keyboard.type("\n// typed");
    await expect.poll(() => editor.innerText()).toContain("// typed");
    await page.click(byId("stepper-code-apply"));
    await expect.poll(() => text("stepper-code-message"), { timeout: 30_000 }).toContain("Applied \"page-midpoint\"");
    await expect.poll(() => text("stepper-label")).toContain("page-midpoint");
    await expect.poll(() => stepCount(), { timeout: 30_000 }).toBeGreaterThan(3);
    await pause();
    // the midpoint rule evaluates the tendency twice per step (Butcher 2016)
    expect(await text("rhs-per-step")).toBe("2");
    await page.locator(byId("code-panel")).screenshot({ path: shot("20-code-panel") });
  });

  it("the template's declared option bounds are enforced in the page, as on the command line", async () => {
    await page.selectOption(byId("code-example"), "template");
    await expect.poll(() => page.locator(`${byId("stepper-code")} .cm-content`).innerText()).toContain("starter stepper module");
    await page.fill(byId("code-options"), '{"alpha": 5}');
    await page.click(byId("stepper-code-apply"));
    // the template declares alpha in [0.1, 1] (stepperTemplate in solver/time/template.ts)
    await expect.poll(() => text("stepper-code-message"), { timeout: 30_000 }).toMatch(/alpha.*1/);
    expect(await text("run-button")).toBe("Run");
    await page.fill(byId("code-options"), '{"alpha": 1}');
    await page.click(byId("stepper-code-apply"));
    await expect.poll(() => text("stepper-code-message"), { timeout: 30_000 }).toContain("Applied \"my-stepper\"");
    await pause();
    await page.fill(byId("code-options"), "");
  });

  it("a syntax error is shown with its line and column, and nothing is loaded", async () => {
    const bad = MIDPOINT.replace("const k = problem.newVector(), y = problem.newVector();", "const k = problem.newVector(, y = problem.newVector();");
    await setCode(bad);
    const steps = await stepCount();
    await page.click(byId("stepper-code-apply"));
    await expect.poll(() => text("stepper-code-message")).toMatch(/Syntax error at line 4, column \d+/);
    expect(await stepCount()).toBe(steps);
    expect(await page.locator(`${byId("stepper-code")} .cm-lintRange-error`).count()).toBeGreaterThan(0);
    await page.locator(byId("code-panel")).screenshot({ path: shot("21-code-syntax-error") });
    // a wrong shape: no name, and create is not a function
    await setCode("export default { order: 2, description: \"no name\", create: 5 };");
    await page.click(byId("stepper-code-apply"));
    await expect.poll(() => text("stepper-code-message"), { timeout: 30_000 }).toMatch(/could not be loaded: .*your code.*name/);
    expect(await stepCount()).toBe(steps);
  });

  it("a step that throws is reported at its line in the editor, and TypeScript types are stripped", async () => {
    const throwing = [
      "import type { StepperDefinition } from \"stepwell/solver/api\";",
      "const s: StepperDefinition = {",
      "  name: \"page-thrower\", order: 1, description: \"throws on its third step\",",
      "  create(problem) {",
      "    let calls: number = 0;",
      "    return {",
      "      step(x: Float64Array, t: number, dt: number): void {",
      "        calls++;",
      "        if (calls > 2) throw new Error(\"deliberate failure\");",
      "      },",
      "    };",
      "  },",
      "};",
      "export default s;",
    ].join("\n");
    await page.selectOption(byId("code-language"), "ts");
    await setCode(throwing);
    await page.click(byId("stepper-code-apply"));
    await expect.poll(() => text("stepper-code-message"), { timeout: 30_000 }).toMatch(/deliberate failure.*line 9, column \d+ of your code/);
    await page.locator(byId("code-panel")).screenshot({ path: shot("22-code-throws") });
    expect(await text("run-button")).toBe("Run");
  });

  it("a stepper that never returns is stopped after the visible time-out; the run goes on from the last good state", async () => {
    expect(await text("step-timeout")).toContain("5 s");
    // first a good stepper makes progress (and the worker sends a checkpoint): Kutta's third-order method, stable
    // on the imaginary axis for |ωΔt| ≤ √3 (Hairer, Nørsett & Wanner 1993), at Δt = 10 s (about 0.35 of the RK4 limit)
    await page.click(byId("reset-button"));
    await expect.poll(() => stepCount(), { timeout: 30_000 }).toBe(0);
    await setCode(readFileSync(path.join(ROOT, "public", "steppers", "kutta3.ts"), "utf8"));
    await page.fill(byId("code-dt"), "10");
    await page.click(byId("stepper-code-apply"));
    await expect.poll(() => stepCount(), { timeout: 30_000 }).toBeGreaterThan(5);
    await pause();
    const good = await stepCount();
    const endless = MIDPOINT.replace("problem.tendency(k, x, t);", "for (;;) { /* never returns */ }").replace("page-midpoint", "page-endless");
    await setCode(endless);
    await page.click(byId("stepper-code-apply"));
    await expect.poll(() => text("watchdog"), { timeout: 40_000 }).toContain("took longer than the 5 s time-out");
    const said = await text("watchdog");
    console.log("watchdog notice:", said);
    expect(said).toContain("last good state");
    expect(said).toContain("page-endless");
    await expect.poll(() => text("stepper-label"), { timeout: 30_000 }).toContain("kutta3");
    // the last good state came back: not reset to zero, at most the steps of the last second lost
    const back = await stepCount();
    expect(back).toBeGreaterThan(0);
    expect(back).toBeLessThanOrEqual(good);
    await page.screenshot({ path: shot("23-watchdog") });
    // the controls answer: Run, Pause, Reset
    await page.click(byId("run-button"));
    await expect.poll(() => stepCount(), { timeout: 30_000 }).toBeGreaterThan(back);
    const t0 = Date.now();
    await page.click(byId("run-button"));
    await expect.poll(() => text("run-button")).toBe("Run");
    perf.pauseAfterWatchdogMs = Date.now() - t0;
    await page.click(byId("reset-button"));
    await expect.poll(() => stepCount(), { timeout: 10_000 }).toBe(0);
    await page.fill(byId("code-dt"), "");
  });
});

describe("code kept between visits", () => {
  it("the editor's code is stored per stepper name and comes back after a reload", async () => {
    await setCode(MIDPOINT.replace("page-midpoint", "kept-between-visits"));
    await expect.poll(() => page.evaluate(() => localStorage.getItem("stepwell.code.kept-between-visits")), { timeout: 10_000 }).toContain("kept-between-visits");
    await page.reload();
    await page.waitForSelector('[data-testid="app"][data-ready="yes"]', { timeout: 60_000 });
    await expect.poll(() => page.locator(`${byId("stepper-code")} .cm-content`).innerText()).toContain("kept-between-visits");
  });
});

describe("assess from the page", () => {
  it("runs the report card in a background worker with progress, can be cancelled, and shows the table", async () => {
    await loadLink(link(smallScenario()));
    await setCode(MIDPOINT);
    await page.click(byId("assess-button"));
    await page.locator(byId("assess-progress")).waitFor({ timeout: 30_000 });
    // the page stays usable meanwhile: the run starts and pauses
    await page.click(byId("run-button"));
    await expect.poll(() => stepCount(), { timeout: 30_000 }).toBeGreaterThan(0);
    await pause();
    await page.click(byId("assess-cancel"));
    await expect.poll(() => text("stepper-code-message")).toContain("Assess cancelled");
    expect(await page.locator(byId("assess-progress")).count()).toBe(0);
    await page.click(byId("assess-button"));
    await page.locator(byId("assess-table")).waitFor({ timeout: 300_000 });
    const table = await text("assess-table");
    // the explicit midpoint rule is second order (Butcher 2016): the observed order is reported next to the declared 2
    expect(table).toContain("declared 2");
    expect(table).toMatch(/observed order\s*[\d.]+ on ring-wave/);
    await page.locator(byId("code-panel")).screenshot({ path: shot("29-assess") });
  }, 400_000);
});

describe("code from a link", () => {
  it("shows the code and runs nothing until the user presses Run this code", async () => {
    const code = MIDPOINT.replace("page-midpoint", "linked-midpoint");
    const shared = { ...smallScenario({ module: "editor:linked-midpoint", method: "user-module", dt: 20 }), stepperCode: { name: "linked-midpoint", language: "js", source: code } };
    await page.evaluate((h) => { window.location.hash = h; }, link(shared));
    await page.locator(byId("consent-run-code")).waitFor({ timeout: 60_000 });
    await expect.poll(async () => page.locator(`${byId("stepper-code")} .cm-content`).innerText()).toContain("linked-midpoint");
    // nothing of the code ran: the run holds RK4 and has not stepped, Apply is held back
    expect(await text("stepper-label")).not.toContain("linked-midpoint");
    await page.waitForTimeout(1500);
    expect(await stepCount()).toBe(0);
    expect(await page.locator(byId("stepper-code-apply")).isDisabled()).toBe(true);
    await page.locator(byId("code-panel")).screenshot({ path: shot("24-link-consent") });
    await page.click(byId("consent-run-code"));
    await expect.poll(() => text("stepper-label"), { timeout: 30_000 }).toContain("linked-midpoint");
    await expect.poll(() => stepCount(), { timeout: 30_000 }).toBeGreaterThan(0);
    await pause();
    // a share link of this run carries the code again
    await page.click(byId("share-button"));
    const url = await page.locator(byId("share-link")).inputValue();
    const { decodeSetup } = await import("../../app/share");
    const decoded = decodeSetup(new URL(url).hash);
    expect(decoded.kind).toBe("ok");
    expect((decoded as { scenario: { stepperCode: { source: string } } }).scenario.stepperCode.source).toContain("linked-midpoint");
  });
});

describe("code in an exported scenario file", () => {
  it("export writes the code with the scenario; importing the file shows it and waits for consent", async () => {
    await loadLink(link(smallScenario()));
    const named = MIDPOINT.replace("page-midpoint", "exported-midpoint");
    await setCode(named);
    await page.click(byId("stepper-code-apply"));
    await expect.poll(() => text("stepper-label"), { timeout: 30_000 }).toContain("exported-midpoint");
    await pause();
    await page.click(byId("tab-scenario"));
    const [download] = await Promise.all([page.waitForEvent("download"), page.click(byId("scenario-export"))]);
    const file = await download.path();
    const saved = JSON.parse(readFileSync(file, "utf8")) as { stepper: { module: string }; stepperCode: { source: string } };
    expect(saved.stepper.module).toBe("editor:exported-midpoint");
    expect(saved.stepperCode.source).toContain("exported-midpoint");
    await setCode(MIDPOINT);
    await page.setInputFiles(byId("scenario-import"), file);
    await page.locator(byId("consent-run-code")).waitFor({ timeout: 60_000 });
    await expect.poll(() => page.locator(`${byId("stepper-code")} .cm-content`).innerText()).toContain("exported-midpoint");
    expect(await stepCount()).toBe(0);
    expect(await text("stepper-label")).not.toContain("exported-midpoint");
    await page.click(byId("consent-run-code"));
    await expect.poll(() => text("stepper-label"), { timeout: 30_000 }).toContain("exported-midpoint");
    await pause();
    await page.click(byId("tab-stepper"));
  });
});

describe("side by side", () => {
  it("races three steppers in lock-step with a difference map; one that blows up stops alone", async () => {
    await loadLink(link(smallScenario()));
    await page.click(byId("open-compare"));
    await page.locator(byId("compare-view")).waitFor();
    await page.click(byId("compare-add"));
    await page.selectOption(byId("compare-method-0"), "rk4");
    await page.selectOption(byId("compare-method-1"), "ssprk3");
    await page.selectOption(byId("compare-method-2"), "rk4");
    await page.fill(byId("compare-dt-1"), "15");
    // RK4 far beyond its limit (about 29 s on this mesh, Kutta 1901 stability polynomial on the imaginary axis)
    await page.fill(byId("compare-dt-2"), "120");
    await page.click(byId("compare-start"));
    await expect.poll(() => page.locator(byId("compare-lane-2")).getAttribute("data-status"), { timeout: 60_000 }).toBe("failed");
    expect(await text("compare-lane-2")).toContain("blew up");
    const s0 = Number(await page.locator(byId("compare-lane-0")).getAttribute("data-steps"));
    await expect.poll(async () => Number(await page.locator(byId("compare-lane-0")).getAttribute("data-steps")), { timeout: 30_000 }).toBeGreaterThan(s0 + 10);
    expect(await page.locator(byId("compare-lane-1")).getAttribute("data-status")).toBe("ready");
    // lock-step: the maps of A (Δt 20 s) and B (Δt 15 s) show the same target time, B to within one of its steps
    await page.click(byId("compare-pause"));
    await page.waitForTimeout(500);
    const times = await Promise.all([0, 1].map(async (i) => Number(await page.locator(byId(`compare-lane-${i}`)).getAttribute("data-time"))));
    expect(times[0]).toBeGreaterThan(0);
    expect(times[0] - times[1]).toBeGreaterThanOrEqual(0);
    expect(times[0] - times[1]).toBeLessThan(15);
    await page.click(byId("compare-run"));
    expect(await page.locator(byId("difference-map")).getAttribute("data-ready")).toBe("yes");
    // lock-step: A (Δt 20 s) and B (Δt 15 s) are within one step of each other in simulated time
    const diffCaption = await text("difference-map");
    expect(diffCaption).toMatch(/A − B|largest \|A − B\|/);
    expect(await text("compare-cost")).toMatch(/tendency evaluations/);
    await page.waitForTimeout(1000);
    await page.locator(byId("compare-view")).screenshot({ path: shot("25-compare") });
    await page.click(byId("compare-pause"));
    expect(errors.filter((e) => !/Failed to load resource/.test(e))).toEqual([]);
    await page.click(byId("compare-close"));
    await expect.poll(() => page.locator(byId("compare-view")).count()).toBe(0);
  });

  it("records frames per second and the longest main-thread task while three steppers race on 16,384 cells", async () => {
    await loadLink(link({ ...smallScenario({ method: "rk4", dt: 30 }, 128), name: "race-16k", mesh: { type: "periodic-hex", cellsX: 128, cellsY: 128, spacing: 10000 } }), "race-16k");
    await page.click(byId("open-compare"));
    await page.click(byId("compare-add"));
    await page.selectOption(byId("compare-method-1"), "ssprk3");
    await page.selectOption(byId("compare-method-2"), "split-explicit");
    await page.fill(byId("compare-dt-1"), "20");
    await page.fill(byId("compare-dt-2"), "300");
    await page.evaluate(() => {
      const w = window as unknown as { __long: { start: number; duration: number }[]; __frames: number[]; __framesOn: boolean };
      w.__long = [];
      new PerformanceObserver((list) => { for (const e of list.getEntries()) w.__long.push({ start: e.startTime, duration: e.duration }); }).observe({ type: "longtask" });
      w.__frames = [];
      w.__framesOn = true;
      const tick = (t: number) => { w.__frames.push(t); if (w.__framesOn) requestAnimationFrame(tick); };
      requestAnimationFrame(tick);
    });
    await page.click(byId("compare-start"));
    await expect.poll(async () => Number(await page.locator(byId("compare-lane-0")).getAttribute("data-steps")), { timeout: 90_000 }).toBeGreaterThan(0);
    const t0 = await page.evaluate(() => performance.now());
    await page.waitForTimeout(8000);
    const m = await page.evaluate((start) => {
      const w = window as unknown as { __long: { start: number; duration: number }[]; __frames: number[]; __framesOn: boolean };
      w.__framesOn = false;
      const f = w.__frames.filter((t) => t >= start);
      const long = w.__long.filter((e) => e.start >= start);
      const gaps = f.slice(1).map((t, i) => t - f[i]).sort((a, b) => a - b);
      return {
        windowSeconds: (f[f.length - 1] - f[0]) / 1000, framesPerSecond: (f.length - 1) / ((f[f.length - 1] - f[0]) / 1000),
        frameGapMedianMs: gaps[Math.floor(gaps.length / 2)], frameGapMaxMs: gaps[gaps.length - 1],
        longTasks: long.length, longestTaskMs: long.reduce((a, e) => Math.max(a, e.duration), 0),
      };
    }, t0);
    const steps = await Promise.all([0, 1, 2].map(async (i) => Number(await page.locator(byId(`compare-lane-${i}`)).getAttribute("data-steps"))));
    perf.race16k = { cells: 16384, steppers: ["rk4 Δt 30 s", "ssprk3 Δt 20 s", "split-explicit Δt 300 s"], steps, ...m };
    console.log("three-stepper race figures:", JSON.stringify(perf.race16k));
    await page.locator(byId("compare-view")).screenshot({ path: shot("26-compare-16k") });
    expect(steps[0]).toBeGreaterThan(0);
    await page.click(byId("compare-close"));
  });
});

describe("energy budget card and a busy worker", () => {
  it("the wind-driven main demo shows its budget terms and the residual on a log axis", async () => {
    await page.evaluate(() => { window.location.hash = ""; });
    await page.goto(sb.baseUrl);
    await page.waitForSelector('[data-testid="app"][data-ready="yes"]', { timeout: 60_000 });
    expect(await text("scenario-name")).toContain("eddying-jets");
    await page.click(byId("run-button"));
    await expect.poll(async () => Number(await page.locator(byId("budget-plot")).getAttribute("data-points")), { timeout: 60_000 }).toBeGreaterThan(5);
    await pause();
    // a run driven by wind from rest: the wind has done work, so the residual is stated relative to the budget terms
    await expect.poll(() => text("budget-summary")).toMatch(/residual .* of the largest budget term/);
    const paths = await page.locator(`${byId("budget-terms-plot")} path`).count();
    expect(paths).toBe(4);
    expect(await page.locator(byId("energy-plot")).count()).toBe(1);
    await page.locator(byId("drift-panel")).screenshot({ path: shot("27-budget-card") });
  });

  it("Pause and Reset answer while split-explicit runs with the largest sub-step count on a big mesh", async () => {
    const big = { ...smallScenario({ method: "split-explicit", dt: 600, substeps: 20000 }, 128), name: "busy-16k", mesh: { type: "periodic-hex", cellsX: 128, cellsY: 128, spacing: 10000 } };
    await loadLink(link(big), "busy-16k");
    // in the page: the time from a click to the first change of the page that answers it
    await page.evaluate(() => {
      const w = window as unknown as { __clickAt: number; __answerAt: number; __answered: () => boolean };
      w.__clickAt = 0; w.__answerAt = 0; w.__answered = () => false;
      const check = () => { if (w.__clickAt && !w.__answerAt && w.__answered()) w.__answerAt = performance.now(); };
      document.addEventListener("click", () => { w.__clickAt = performance.now(); w.__answerAt = 0; }, true);
      new MutationObserver(check).observe(document.body, { subtree: true, childList: true, characterData: true });
    });
    const answered = async () => page.evaluate(() => { const w = window as unknown as { __clickAt: number; __answerAt: number }; return w.__answerAt ? w.__answerAt - w.__clickAt : null; });
    await page.click(byId("run-button"));
    await page.waitForTimeout(1500);
    await page.evaluate(() => { (window as unknown as { __answered: () => boolean }).__answered = () => document.querySelector('[data-testid="run-button"]')?.textContent === "Run"; });
    await page.click(byId("run-button"));
    await expect.poll(() => text("run-button"), { timeout: 5000, interval: 20 }).toBe("Run");
    perf.pauseWhileBusyMs = await answered();
    await page.evaluate(() => {
      (window as unknown as { __answered: () => boolean }).__answered = () => !!document.querySelector('[data-testid="watchdog"]') ||
        document.querySelector('[data-testid="sim-time"]')?.textContent === "0.00 h";
    });
    const t1 = Date.now();
    await page.click(byId("reset-button"));
    // the page answers at once (a notice, or the reset itself when no step was in progress), the new worker then loads
    await expect.poll(answered, { timeout: 30_000, interval: 20 }).not.toBeNull();
    perf.resetAnsweredMs = await answered();
    await expect.poll(() => text("sim-time"), { timeout: 60_000, interval: 20 }).toBe("0.00 h");
    perf.resetDoneMs = Date.now() - t1;
    perf.resetNotice = (await page.locator(byId("watchdog")).count()) > 0 ? (await text("watchdog")).replace(/×$/, "") : null;
    // run again: one step of 20 000 sub-steps on this mesh either finishes or is stopped by the 5 s time-out
    await expect.poll(() => text("scenario-name"), { timeout: 60_000 }).toContain("busy-16k");
    await page.click(byId("run-button"));
    const t2 = Date.now();
    await expect.poll(async () => (await stepCount()) > 0 || /took longer than the 5 s time-out/.test(await page.locator(byId("watchdog")).count() ? await text("watchdog") : ""), { timeout: 60_000 }).toBe(true);
    perf.busyRunOutcome = (await stepCount()) > 0 ? `a step finished after ${Date.now() - t2} ms` : `stopped by the time-out after ${Date.now() - t2} ms`;
    await pause();
    console.log("busy-worker figures:", JSON.stringify({ pause: perf.pauseWhileBusyMs, resetAnswered: perf.resetAnsweredMs, resetDone: perf.resetDoneMs, notice: perf.resetNotice, run: perf.busyRunOutcome }));
    await page.screenshot({ path: shot("28-busy-worker") });
    expect(errors.filter((e) => !/Failed to load resource/.test(e))).toEqual([]);
  });
});
