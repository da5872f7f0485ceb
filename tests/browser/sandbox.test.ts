/**
 * End-to-end tests of the browser sandbox: Vite dev server + Debian's Chromium via playwright-core.
 * Small scenarios (a few hundred cells) are loaded through share links where speed matters; the main demo is
 * used where the test is about the page as a user first sees it. Screenshots: test-output/screenshots/.
 */
import { readFileSync, writeFileSync } from "node:fs";
import { cpus, loadavg } from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Page } from "playwright-core";
import { encodeSetup } from "../../app/share";
import { byId, mapFingerprint, openApp, ROOT, shot, startSandbox, type Sandbox } from "./harness";

let sb: Sandbox;
/** One page for most tests (opening a page costs seconds of module loading); setups arrive as share links in the hash. */
let page: Page;
const errors: string[] = [];
beforeAll(async () => {
  sb = await startSandbox();
  page = await openApp(sb, "", errors);
});
afterAll(async () => { await sb?.close(); });

let unique = 0;
/** A small doubly periodic two-layer ocean with a surface bump: 16 × 16 = 256 cells. */
function smallScenario(dt = 60, method = "rk4") {
  return {
    name: "tiny-ring", description: `test scenario: a small ring wave (${++unique})`,
    mesh: { type: "periodic-hex", cellsX: 16, cellsY: 16, spacing: 20000 },
    layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
    initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
    stepper: { method, dt }, duration: 86400,
  };
}
const link = (s: unknown) => `#${encodeSetup(s)}`;
const text = async (page: Page, id: string) => (await page.locator(byId(id)).textContent()) ?? "";
const stepCount = async (page: Page) => Number(await text(page, "step-count"));
const points = async (page: Page, id: string) => Number(await page.locator(byId(id)).getAttribute("data-points"));

/** Load a setup into the shared page through the address bar, as a pasted link would. */
async function loadLink(hash: string, name = "tiny-ring") {
  await page.evaluate((h) => { window.location.hash = h; }, hash);
  await expect.poll(() => text(page, "scenario-name"), { timeout: 30_000 }).toContain(name);
  await expect.poll(() => stepCount(page)).toBe(0);
}

/** After a pause the chunk already in the worker still lands: wait until the step count stops changing. */
async function settled(page: Page): Promise<number> {
  let last = -1;
  for (;;) {
    const n = await stepCount(page);
    if (n === last) return n;
    last = n;
    await page.waitForTimeout(250);
  }
}

async function runFor(page: Page, ms: number) {
  await page.click(byId("run-button"));
  await page.waitForTimeout(ms);
  await page.click(byId("run-button"));
  await expect.poll(() => text(page, "run-button")).toBe("Run");
  await settled(page);
}

describe("browser sandbox", () => {
  it("loads the main demo with every cell drawn, a colour bar with units, and no console error", async () => {
    expect(await text(page, "scenario-name")).toContain("eddying-jets");
    const canvas = page.locator(byId("map-canvas"));
    const cells = Number(await canvas.getAttribute("data-cells"));
    expect(cells).toBeGreaterThan(1000);
    expect(Number(await canvas.getAttribute("data-covered-cells"))).toBe(cells);
    expect(await text(page, "colour-bar")).toContain("[m]");
    expect(await text(page, "field-range")).toMatch(/max .* m\s*min .* m/);
    // hover over the middle of the basin shows the value with its unit and the coordinates in km
    const box = (await canvas.boundingBox())!;
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
    const hover = await page.locator(byId("map-hover")).innerText();
    expect(hover).toMatch(/^-?[\d.e+-]+ m$/m);
    expect(hover).toMatch(/x [\d.]+ km · y [\d.]+ km/);
    await page.screenshot({ path: shot("01-overview") });
    expect(errors).toEqual([]);
  });

  it("running changes the map's pixels and adds points to both drift plots; field and layer pickers redraw", async () => {
    const before = await mapFingerprint(page);
    expect(await points(page, "energy-plot")).toBe(1);
    await runFor(page, 2500);
    expect(await stepCount(page)).toBeGreaterThan(3);
    expect(await points(page, "energy-plot")).toBeGreaterThan(2);
    expect(await points(page, "mass-plot")).toBe(await points(page, "energy-plot"));
    expect(await mapFingerprint(page)).not.toBe(before);
    expect(await text(page, "courant")).toMatch(/fast wave [\d.]+/);
    expect(await text(page, "rhs-per-step")).toBe("4"); // RK4: four tendency evaluations per step (Kutta 1901)
    await page.locator(byId("run-controls")).screenshot({ path: shot("03-run-controls") });
    const box = (await page.locator(byId("map-canvas")).boundingBox())!;
    await page.mouse.move(box.x + box.width * 0.3, box.y + box.height * 0.6);
    await page.locator(byId("map-hover")).waitFor();
    await page.locator(byId("field-map")).screenshot({ path: shot("02-field-map") });
    await page.locator(byId("drift-panel")).screenshot({ path: shot("04-drift-plots") });
    // another field and another layer while paused
    const f1 = await mapFingerprint(page);
    await page.selectOption(byId("field-picker"), "speed");
    await page.selectOption(byId("layer-picker"), "1");
    await expect.poll(() => text(page, "colour-bar")).toContain("[m/s]");
    await expect.poll(() => mapFingerprint(page)).not.toBe(f1);
    await page.click(byId("log-toggle"));
    expect(await page.locator(byId("log-toggle")).isChecked()).toBe(false);
    await page.selectOption(byId("field-picker"), "surface");
    expect(errors).toEqual([]);
  });

  it("switching the stepper while paused continues from the current state and runs again", async () => {
    await loadLink(link(smallScenario(60)));
    await runFor(page, 800);
    const steps0 = await stepCount(page);
    const time0 = await text(page, "sim-time");
    expect(steps0).toBeGreaterThan(0);
    await page.selectOption(byId("method-select"), "ssprk3");
    await page.fill(byId("dt-input"), "30");
    await expect.poll(() => text(page, "dt-ratio")).toMatch(/0\.\d+ × the RK4 limit/);
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "stepper-label")).toContain("ssprk3");
    expect(await stepCount(page)).toBe(steps0); // nothing was reset
    expect(await text(page, "sim-time")).toBe(time0);
    await page.screenshot({ path: shot("05-stepper-panel") });
    await runFor(page, 800);
    expect(await stepCount(page)).toBeGreaterThan(steps0);
    await expect.poll(() => text(page, "rhs-per-step")).toBe("3"); // three-stage SSP RK3 (Shu & Osher 1988)
    // Δt changed while running lands between chunks and the run goes on
    await page.click(byId("run-button"));
    await page.fill(byId("dt-input"), "40");
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "courant")).toContain("Δt = 40 s");
    const s2 = await stepCount(page);
    await expect.poll(() => stepCount(page)).toBeGreaterThan(s2);
    expect(await text(page, "run-button")).toBe("Pause");
    await page.click(byId("run-button"));
    await expect.poll(() => text(page, "run-button")).toBe("Run");
    await settled(page);
    // a bad option value is refused with the solver's field-named reason
    await page.fill(byId("dt-input"), "-5");
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "stepper-error")).toContain("stepper.dt");
    // methods registered with matrix-function options show them; applying one and stepping counts matvecs
    const names = await page.locator(`${byId("method-select")} option`).evaluateAll((os) => os.map((o) => (o as HTMLOptionElement).value));
    for (const name of names) {
      await page.selectOption(byId("method-select"), name);
      if ((await page.locator(byId("option-backend")).count()) === 0) continue;
      expect(await page.locator(byId("option-linear")).count()).toBe(1);
      expect(await page.locator(byId("option-tolerance")).count()).toBe(1);
      await page.fill(byId("dt-input"), "60");
      await page.locator(byId("option-tolerance")).scrollIntoViewIfNeeded();
      await page.screenshot({ path: shot("05b-stepper-options") });
      await page.click(byId("apply-stepper"));
      await expect.poll(() => text(page, "stepper-label")).toContain(name);
      const s1 = await stepCount(page);
      await page.click(byId("step-button"));
      await expect.poll(() => stepCount(page), { timeout: 20_000 }).toBe(s1 + 1);
      await expect.poll(async () => Number(await text(page, "matvecs-per-step"))).toBeGreaterThan(0);
      break;
    }
  });

  it("option pickers follow the method family; etdrk4 with modes:1 and chebyshev runs; bad values and combinations are refused inline", async () => {
    await loadLink(link(smallScenario(60)));
    await page.click(byId("tab-stepper"));
    const optionValues = (id: string) => page.locator(`${byId(id)} option`).evaluateAll((os) => os.map((o) => (o as HTMLOptionElement).value));
    const defaultOf = (id: string) => page.locator(`${byId(id)} option[data-default="yes"]`).getAttribute("value");
    await page.selectOption(byId("method-select"), "etdrk4");
    // two layers: rest, modes:1, modes:2, jacobian; defaults rest and krylov
    expect(await optionValues("option-linear")).toEqual(["rest", "modes:1", "modes:2", "jacobian"]);
    expect(await defaultOf("option-linear")).toBe("rest");
    expect(await defaultOf("option-backend")).toBe("krylov");
    expect(await optionValues("option-backend")).toEqual(expect.arrayContaining(["krylov", "taylor", "chebyshev", "rational"]));
    expect(await optionValues("option-filter")).toEqual(["off", "8", "16"]);
    expect(await page.locator(byId("option-tolerance")).getAttribute("placeholder")).toContain("1e-8");
    await page.selectOption(byId("option-linear"), "modes:1");
    await page.selectOption(byId("option-backend"), "chebyshev");
    expect(await text(page, "choice-help-backend")).toContain("Chebyshev");
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "stepper-label")).toContain("etdrk4 (linear=modes:1, backend=chebyshev");
    expect(await page.locator(byId("stepper-error")).count()).toBe(0);
    const s0 = await stepCount(page);
    await runFor(page, 1200);
    expect(await stepCount(page)).toBeGreaterThan(s0);
    await expect.poll(async () => Number(await text(page, "matvecs-per-step"))).toBeGreaterThan(0);
    await page.click(byId("run-button")); // a second stretch: the run goes on from there
    const s1 = await stepCount(page);
    await expect.poll(() => stepCount(page), { timeout: 20_000 }).toBeGreaterThan(s1);
    await page.click(byId("run-button"));
    await expect.poll(() => text(page, "run-button")).toBe("Run");
    await settled(page);
    // jacobian marks chebyshev as unavailable; applying it anyway shows the solver's reason under the backend
    await page.selectOption(byId("option-linear"), "jacobian");
    expect(await page.locator(`${byId("option-backend")} option[value="chebyshev"]`).getAttribute("data-conflict")).toBe("yes");
    expect(await text(page, "option-conflict-backend")).toContain("jacobian");
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "option-error-backend")).toContain("stepper.backend");
    expect(await text(page, "stepper-label")).toContain("backend=chebyshev"); // the running stepper stays
    // an out-of-range tolerance and a fractional sub-step count are refused by field
    await page.selectOption(byId("option-backend"), "krylov");
    await page.fill(byId("option-tolerance"), "2");
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "option-error-tolerance")).toContain("stepper.tolerance");
    await page.fill(byId("option-tolerance"), "1e-6");
    await page.fill(byId("option-substeps"), "2.5");
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "option-error-substeps")).toContain("stepper.substeps");
    await page.fill(byId("option-substeps"), "0"); // 0 = automatic
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "stepper-label")).toContain("linear=jacobian, backend=krylov, tol=0.000001");
    expect(await page.locator(byId("stepper-error")).count()).toBe(0);
    // split-explicit has its own filter and passes
    await page.selectOption(byId("method-select"), "split-explicit");
    expect(await optionValues("option-filter")).toEqual(["boxcar", "hann"]);
    expect(await optionValues("option-passes")).toEqual(["1", "2", "3", "4"]);
    expect(await defaultOf("option-passes")).toBe("2");
    expect(await page.locator(byId("option-linear")).count()).toBe(0);
    // a Rosenbrock method with a fixed linear part says that its order drops
    await page.selectOption(byId("method-select"), "exprb2");
    expect(await defaultOf("option-linear")).toBe("jacobian");
    expect(await page.locator(byId("option-linear")).inputValue()).toBe("jacobian");
    await page.selectOption(byId("option-linear"), "rest");
    await page.click(byId("apply-stepper"));
    await expect.poll(() => text(page, "stepper-label")).toContain("exprb2 (linear=rest");
    await expect.poll(() => text(page, "stepper-note")).toMatch(/exprb2 .*order drops/);
    const s2 = await settled(page);
    await page.click(byId("step-button"));
    await expect.poll(() => stepCount(page), { timeout: 20_000 }).toBe(s2 + 1);
    await page.locator(byId("stepper-note")).scrollIntoViewIfNeeded();
    await page.screenshot({ path: shot("05c-stepper-pickers") });
    expect(errors).toEqual([]);
  });

  it("an unstable Δt stops the run with step, time, reason and Courant numbers, and marks the cell", async () => {
    // RK4 is stable for |ωΔt| ≤ 2√2 on the imaginary axis; 3× the limit grows the fastest mode every step
    await loadLink(link(smallScenario(350)));
    await page.click(byId("run-button"));
    const msg = page.locator(byId("blowup-message"));
    await msg.waitFor({ timeout: 30_000 });
    const t = (await msg.textContent()) ?? "";
    expect(t).toMatch(/Step \d+/);
    expect(t).toMatch(/t = [\d.]+ h/);
    expect(t).toMatch(/thickness|velocity/);
    expect(t).toMatch(/Courant numbers: fast wave [\d.]+/);
    await expect.poll(() => text(page, "run-button")).toBe("Run");
    // the marked cell is drawn in magenta (255, 0, 255) over the last good state
    const magenta = await page.evaluate(() => {
      const c = document.querySelector('[data-testid="map-canvas"]') as HTMLCanvasElement;
      const d = c.getContext("2d")!.getImageData(0, 0, c.width, c.height).data;
      let n = 0;
      for (let i = 0; i < d.length; i += 4) if (d[i] > 230 && d[i + 1] < 60 && d[i + 2] > 230) n++;
      return n;
    });
    expect(magenta).toBeGreaterThan(10);
    await page.screenshot({ path: shot("06-blow-up") });
    // lowering Δt continues from the last good state
    await page.fill(byId("dt-input"), "60");
    await page.click(byId("apply-stepper"));
    await expect.poll(() => msg.count()).toBe(0);
    const s0 = await stepCount(page);
    await page.click(byId("step-button"));
    await expect.poll(() => stepCount(page)).toBe(s0 + 1);
  });

  it("importing a malformed scenario file shows the field-level error and keeps the current run", async () => {
    await loadLink(link(smallScenario()));
    await page.click(byId("tab-scenario"));
    const bad = smallScenario();
    bad.layers[1].density = 1020; // lighter than the layer above
    await page.setInputFiles(byId("scenario-import"), { name: "bad.json", mimeType: "application/json", buffer: Buffer.from(JSON.stringify(bad)) });
    await expect.poll(() => text(page, "scenario-error")).toContain("layers[1].density");
    expect(await text(page, "scenario-error")).toContain("bad.json");
    expect(await page.locator('[data-testid="field-error"][data-field="layers[1].density"]').count()).toBe(1);
    expect(await text(page, "scenario-name")).toContain("tiny-ring");
    await page.setInputFiles(byId("scenario-import"), { name: "broken.json", mimeType: "application/json", buffer: Buffer.from('{"name": "x", ') });
    await expect.poll(() => text(page, "scenario-error")).toContain("not valid JSON");
    // an inline edit the solver refuses
    await page.fill(byId("input-mesh.spacing"), "-3");
    await page.click(byId("apply-scenario"));
    await expect.poll(() => text(page, "scenario-error")).toContain("mesh.spacing");
    expect(await page.locator('[data-testid="field-error"][data-field="mesh.spacing"]').count()).toBe(1);
    await page.locator(byId("scenario-error")).scrollIntoViewIfNeeded();
    await page.screenshot({ path: shot("07-scenario-panel-error") });
    // a good edit rebuilds the mesh: 20 × 16 cells
    await page.fill(byId("input-mesh.spacing"), "20");
    await page.fill(byId("input-mesh.cellsX"), "20");
    await page.click(byId("apply-scenario"));
    await expect.poll(() => page.locator(byId("map-canvas")).getAttribute("data-cells")).toBe("320");
    // export, then import the exported file: the same setup comes back
    const [download] = await Promise.all([page.waitForEvent("download"), page.click(byId("scenario-export"))]);
    const exported = JSON.parse(readFileSync((await download.path())!, "utf8"));
    expect(exported.mesh.cellsX).toBe(20);
    expect(exported.stepper.method).toBe("rk4");
    await page.selectOption(byId("builtin-select"), "ring-wave");
    await expect.poll(() => text(page, "scenario-name")).toContain("ring-wave");
    await page.setInputFiles(byId("scenario-import"), { name: "roundtrip.json", mimeType: "application/json", buffer: Buffer.from(JSON.stringify(exported)) });
    await expect.poll(() => text(page, "scenario-name")).toContain("tiny-ring");
    expect(await page.locator(byId("map-canvas")).getAttribute("data-cells")).toBe("320");
  });

  it("a share link reproduces scenario and stepper; a tampered link says so and falls back to the default", async () => {
    await loadLink(link(smallScenario(45, "ssprk3")));
    await page.click(byId("tab-scenario"));
    await page.fill(byId("input-physics.f0"), "0.00005");
    await page.click(byId("apply-scenario"));
    await expect.poll(() => page.locator(byId("input-physics.f0")).inputValue()).toBe("0.00005");
    await page.click(byId("share-button"));
    const url = await page.locator(byId("share-link")).inputValue();
    expect(url).toMatch(/#setup=[A-Za-z0-9_-]+\.[0-9a-f]{8}$/);
    await page.screenshot({ path: shot("08-share"), clip: { x: 0, y: 0, width: 1280, height: 160 } });
    const otherErrors: string[] = [];
    const other = await openApp(sb, url.slice(url.indexOf("#")), otherErrors);
    expect(await text(other, "scenario-name")).toContain("tiny-ring");
    expect(await text(other, "stepper-label")).toContain("ssprk3");
    expect(await other.locator(byId("dt-input")).inputValue()).toBe("45");
    await other.click(byId("tab-scenario"));
    expect(await other.locator(byId("input-physics.f0")).inputValue()).toBe("0.00005");
    expect(otherErrors).toEqual([]);
    await other.close();
    // change one character of the payload
    const hash = url.slice(url.indexOf("#"));
    const i = hash.indexOf("=") + 12;
    const tampered = hash.slice(0, i) + (hash[i] === "A" ? "B" : "A") + hash.slice(i + 1);
    await page.evaluate((h) => { window.location.hash = h; }, tampered);
    await expect.poll(() => text(page, "link-error"), { timeout: 30_000 }).toMatch(/shared link could not be used: .*(changed|damaged|JSON)/);
    await expect.poll(() => text(page, "scenario-name"), { timeout: 30_000 }).toContain("eddying-jets");
    await page.screenshot({ path: shot("09-broken-link") });
    // a link with a valid checksum but an invalid scenario names the field
    const s = smallScenario();
    (s.mesh as { spacing: number }).spacing = 0;
    await page.evaluate((h) => { window.location.hash = h; }, link(s));
    await expect.poll(() => text(page, "link-error"), { timeout: 30_000 }).toContain("mesh.spacing");
    await page.click(`${byId("link-error")} button`);
  });

  it("lists every registered method in the modes table with its Δt limit, and the keyboard runs, pauses and steps", async () => {
    await loadLink(link(smallScenario(60)));
    await page.click(byId("tab-stepper"));
    const methods = await page.locator(`${byId("method-select")} option`).count();
    await page.click(byId("tab-modes"));
    const rows = page.locator(`${byId("limits-table")} tbody tr`);
    expect(await rows.count()).toBeGreaterThanOrEqual(Math.max(methods, 2));
    // RK4 limit 2√2/ω_max with ω_max = √6 c0/d (hexagonal C-grid dispersion); c0 = √(g H) for 4000 m of water
    const c0 = Math.sqrt(9.81 * 4000);
    const rk4Limit = (2 * Math.SQRT2) / ((Math.sqrt(6) * c0) / 20000);
    const rk4Row = (await page.locator(`${byId("limits-table")} tr[data-method="rk4"] td`).allTextContents())[1];
    expect(Number(rk4Row)).toBeCloseTo(rk4Limit, -0.5);
    // SSP RK3 reaches √3 on the imaginary axis (Gottlieb, Shu & Tadmor 2001): limit = √3/(2√2) × RK4's
    const sspRow = (await page.locator(`${byId("limits-table")} tr[data-method="ssprk3"] td`).allTextContents())[1];
    expect(Number(sspRow) / Number(rk4Row)).toBeCloseTo(Math.sqrt(3) / (2 * Math.SQRT2), 3);
    await page.screenshot({ path: shot("10-modes-table") });
    await page.locator("body").click({ position: { x: 5, y: 790 } });
    await page.keyboard.press(" ");
    await expect.poll(() => text(page, "run-button")).toBe("Pause");
    await page.keyboard.press(" ");
    await expect.poll(() => text(page, "run-button")).toBe("Run");
    const s0 = await settled(page);
    await page.keyboard.press("s");
    await expect.poll(() => stepCount(page)).toBe(s0 + 1);
  });

  it("a worker that dies is restarted and the user is told", async () => {
    await loadLink(link(smallScenario(60)));
    await page.click(byId("run-button"));
    await page.waitForTimeout(300);
    await page.evaluate(() => (window as unknown as { __stepwell: { crashWorker(): Promise<unknown> } }).__stepwell.crashWorker());
    await expect.poll(() => text(page, "worker-restarted"), { timeout: 20_000 }).toContain("A new one was started");
    await expect.poll(() => stepCount(page), { timeout: 20_000 }).toBe(0);
    expect(await text(page, "run-button")).toBe("Run");
    await page.click(byId("step-button"));
    await expect.poll(() => stepCount(page)).toBe(1);
    await page.click(`${byId("worker-restarted")} button`);
  });

  it("records main-thread long tasks and map frame figures during a run on a 16,384-cell mesh", async () => {
    const big = {
      name: "perf-16k", description: "test scenario: 128 × 128 periodic cells",
      mesh: { type: "periodic-hex", cellsX: 128, cellsY: 128, spacing: 10000 },
      layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
      physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
      initial: { type: "bump", amplitude: 1, radius: 100000, interface: 0 },
      stepper: { method: "rk4", dt: 30 }, duration: 86400,
    };
    await loadLink(link(big), "perf-16k");
    const canvas = page.locator(byId("map-canvas"));
    expect(await canvas.getAttribute("data-cells")).toBe("16384");
    expect(await canvas.getAttribute("data-covered-cells")).toBe("16384");
    const supported = await page.evaluate(() => {
      const w = window as unknown as { __long: { start: number; duration: number }[]; __frames: number[]; __framesOn: boolean };
      w.__long = [];
      new PerformanceObserver((list) => { for (const e of list.getEntries()) w.__long.push({ start: e.startTime, duration: e.duration }); })
        .observe({ type: "longtask" });
      Object.assign((window as unknown as { __stepwellPerf: object }).__stepwellPerf, { draws: 0, drawMsTotal: 0, drawMsMax: 0, snapshots: 0, recycled: 0 });
      w.__frames = [];
      w.__framesOn = true;
      const tick = (t: number) => { w.__frames.push(t); if (w.__framesOn) requestAnimationFrame(tick); };
      requestAnimationFrame(tick);
      return PerformanceObserver.supportedEntryTypes.includes("longtask");
    });
    expect(supported).toBe(true);
    const start = await page.evaluate(() => performance.now());
    await page.click(byId("run-button"));
    // move the pointer over the map meanwhile, so hover redraws come on top of the snapshot redraws
    const box = (await canvas.boundingBox())!;
    for (let i = 0; i < 30; i++) {
      await page.mouse.move(box.x + ((i * 37) % box.width), box.y + ((i * 53) % box.height));
      await page.waitForTimeout(200);
    }
    await page.click(byId("run-button"));
    await expect.poll(() => text(page, "run-button")).toBe("Run");
    await settled(page);
    const m = await page.evaluate((t0) => {
      const w = window as unknown as { __long: { start: number; duration: number }[]; __frames: number[]; __framesOn: boolean; __stepwellPerf: { draws: number; drawMsTotal: number; drawMsMax: number; snapshots: number; recycled: number; rasterMs: number } };
      w.__framesOn = false;
      const f = w.__frames.filter((t) => t >= t0);
      const gaps = f.slice(1).map((t, i) => t - f[i]).sort((a, b) => a - b);
      const long = w.__long.filter((e) => e.start >= t0);
      const seconds = (f[f.length - 1] - f[0]) / 1000;
      return {
        windowSeconds: seconds,
        longTasks: long.length,
        longestTaskMs: long.reduce((a, e) => Math.max(a, e.duration), 0),
        longTaskDurationsMs: long.map((e) => Math.round(e.duration)),
        framesPerSecond: (f.length - 1) / seconds,
        frameGapMedianMs: gaps[Math.floor(gaps.length / 2)],
        frameGapP95Ms: gaps[Math.floor(0.95 * gaps.length)],
        frameGapMaxMs: gaps[gaps.length - 1],
        mapDraws: w.__stepwellPerf.draws,
        mapDrawMeanMs: w.__stepwellPerf.drawMsTotal / Math.max(1, w.__stepwellPerf.draws),
        mapDrawMaxMs: w.__stepwellPerf.drawMsMax,
        snapshots: w.__stepwellPerf.snapshots,
        recycledSnapshots: w.__stepwellPerf.recycled,
        rasterBuildMs: w.__stepwellPerf.rasterMs,
      };
    }, start);
    // the machine's load average goes with the figures: on a shared 2-core machine it dominates them
    const figures = { cells: 16384, steps: await stepCount(page), loadAverage1min: loadavg()[0], cpus: cpus().length, ...m };
    writeFileSync(path.join(ROOT, "test-output", "browser-perf.json"), JSON.stringify(figures, null, 2));
    console.log("browser perf figures:", JSON.stringify(figures));
    await page.screenshot({ path: shot("11-perf-16k") });
    expect(figures.steps).toBeGreaterThan(0);
    expect(m.snapshots).toBeGreaterThan(1);
    expect(m.mapDraws).toBeGreaterThan(1);
    // ping-pong buffers: after the first two chunks every snapshot reuses a buffer the page handed back
    expect(m.recycledSnapshots).toBeGreaterThanOrEqual(m.snapshots - 2);
    // nothing in the whole session on the shared page (blow-up, bad files, broken links, worker crash) logged an error
    expect(errors).toEqual([]);
  });
});
