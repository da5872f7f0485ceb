/**
 * Browser tests of the sandbox's studies, exports and view tools: a stability search and a convergence sweep run
 * in the page's worker pool, their plots and downloaded files (SVG with axes, PNG signature and size, CSV parsed,
 * JSON equal to the solver's own result for the same inputs), cancel, the cell value under the pointer with
 * units, the colour scale fixed or following the field, pause-and-inspect and the shortcut list.
 * Screenshots: test-output/screenshots/.
 */
import { mkdtempSync, readFileSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Download, Page } from "playwright-core";
import { csvParse } from "d3";
import { NetCDFReader } from "netcdfjs";
import { encodeSetup } from "../../app/share";
import { buildScenario } from "../../solver/scenario/build";
import { parseScenario } from "../../solver/scenario/schema";
import { runSweep } from "../../solver/studies/sweep";
import { runStability } from "../../solver/studies/stability";
import { MemoryReferenceCache } from "../../solver/studies/reference";
import { builtinScenario } from "../../solver/scenario/builtins";
import { createRun } from "../../solver/driver/run";
import { computeField, fieldWork } from "../../solver/diagnostics/fields";
import { netcdfSnapshot } from "../../workers/netcdfSnapshot";
import { decodeState } from "../../solver/io/stateFile";
import { mapFingerprint, ROOT } from "./harness";
import { byId, openApp, shot, startSandbox, type Sandbox } from "./harness";

let sb: Sandbox;
let page: Page;
const errors: string[] = [];
beforeAll(async () => {
  sb = await startSandbox();
  page = await openApp(sb, "", errors);
});
afterAll(async () => { await sb?.close(); });

/** A small doubly periodic two-layer ocean with a surface bump: 12 × 12 = 144 cells. */
const tiny = {
  name: "tiny-study", description: "test scenario for the studies",
  mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 60 }, duration: 3600,
};
const text = async (id: string) => (await page.locator(byId(id)).textContent()) ?? "";
/** The map's box in the viewport (scrolled into view first: the study panel below may have been in view). */
async function mapBox() {
  const c = page.locator(byId("map-canvas"));
  await c.scrollIntoViewIfNeeded();
  return (await c.boundingBox())!;
}

async function loadLink(s: unknown, name: string) {
  await page.evaluate((h) => { window.location.hash = h; }, `#${encodeSetup(s)}`);
  await expect.poll(() => text("scenario-name"), { timeout: 60_000 }).toContain(name);
}

async function downloaded(testid: string): Promise<{ name: string; body: Buffer }> {
  const [dl] = await Promise.all([page.waitForEvent("download", { timeout: 30_000 }), page.click(byId(testid))]) as [Download, unknown];
  const p = await dl.path();
  return { name: dl.suggestedFilename(), body: readFileSync(p!) };
}

/** Width and height from a PNG's IHDR chunk, after checking the 8-byte signature (PNG specification, W3C 2003, §5.2, §11.2.2). */
function pngSize(b: Buffer): { width: number; height: number } {
  expect([...b.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
  expect(b.subarray(12, 16).toString("latin1")).toBe("IHDR");
  return { width: b.readUInt32BE(16), height: b.readUInt32BE(20) };
}

/** Drop wall-clock figures, which differ from run to run. */
const withoutWall = (v: unknown) => JSON.parse(JSON.stringify(v, (k, x) => (k === "wallSeconds" ? undefined : x)));

/**
 * Paths where two JSON values differ: any structural difference, or numbers further apart than `rel` relative.
 * The page's Chromium and this Node process may carry different V8 versions whose Math.log can differ in the
 * last bit, which a least-squares order fit then shows in its last digit.
 */
function differences(a: unknown, b: unknown, rel: number, path = "$"): string[] {
  if (typeof a === "number" && typeof b === "number") {
    return a === b || Math.abs(a - b) <= rel * Math.max(Math.abs(a), Math.abs(b)) ? [] : [`${path}: ${a} ≠ ${b}`];
  }
  if (a === null || b === null || typeof a !== "object" || typeof b !== "object") return a === b ? [] : [`${path}: ${JSON.stringify(a)} ≠ ${JSON.stringify(b)}`];
  const ka = Object.keys(a).sort();
  const kb = Object.keys(b).sort();
  if (ka.join() !== kb.join()) return [`${path}: keys ${ka} ≠ ${kb}`];
  return ka.flatMap((k) => differences((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], rel, `${path}.${k}`));
}

async function runStudy(timeout = 240_000) {
  await page.click(byId("study-run"));
  await expect.poll(() => page.locator(byId("study-status")).getAttribute("data-state"), { timeout, interval: 500 }).not.toBe("running");
}

describe("the demo the page opens on", () => {
  it("is eddying-jets started from its shipped day-20 state, and its eddies move within seconds of Run", async () => {
    expect(await text("scenario-name")).toContain("eddying-jets");
    expect(await text("start-state-info")).toMatch(/^Started from states\/eddying-jets-day20\.json \(eddying-jets, stored at 20\.000 d, step 11520\)/);
    expect(await text("step-count")).toBe("0");
    // the map shows the stored state: the same free-surface range as the state file decoded here
    const run = createRun(builtinScenario("eddying-jets")!);
    const { state } = decodeState(run.model, JSON.parse(readFileSync(path.join(ROOT, "public/states/eddying-jets-day20.json"), "utf8")), "state");
    const eta = new Float64Array(run.mesh.nCells);
    const r = computeField(eta, "surface", 0, run.model, state, fieldWork(run.model));
    const shown = /max (\S+) m\s*min (\S+) m/.exec(await text("field-range"))!.slice(1).map(Number);
    expect(shown).toEqual([Number(r.max.toPrecision(4)), Number(r.min.toPrecision(4))]);
    // the scenario's own start is a smooth band; the stored state is eddying: its surface range is wider
    const r0 = computeField(eta, "surface", 0, run.model, run.state, fieldWork(run.model));
    expect(r.max - r.min).toBeGreaterThan(2 * (r0.max - r0.min));
    await page.selectOption(byId("field-picker"), "vorticity");
    await mapBox();
    const before = await mapFingerprint(page);
    await page.click(byId("run-button"));
    await page.waitForTimeout(3000);
    await page.click(byId("run-button"));
    expect(Number(await text("step-count"))).toBeGreaterThan(0);
    expect(await mapFingerprint(page)).not.toBe(before);
    await page.locator(byId("field-map")).screenshot({ path: shot("38-demo-eddies") });
    await page.selectOption(byId("field-picker"), "surface");
    expect(errors).toEqual([]);
  });
});

describe("studies in the page", () => {
  it("a stability search runs in the worker pool; its trials plot and tables export as SVG, PNG, CSV and JSON equal to the solver's", async () => {
    await loadLink(tiny, "tiny-study");
    await page.click(byId("study-kind-stability"));
    await page.fill(byId("study-steppers"), "rk4,ssprk3");
    await page.fill(byId("study-trial-duration"), "1200");
    await page.fill(byId("study-tolerance"), "0.05");
    await runStudy();
    expect(await page.locator(byId("study-error")).count()).toBe(0);
    expect(await text("study-outcome")).toMatch(/^Done: 2 searches on tiny-study/);
    expect(await text("study-progress-text")).toMatch(/^100% · 2 of 2 runs · elapsed [\d.]+ s · left 0 s/);
    const plot = page.locator(byId("stability-trials"));
    expect(Number(await plot.getAttribute("data-points"))).toBeGreaterThan(8);
    await page.locator(byId("studies-panel")).screenshot({ path: shot("30-stability-study") });

    const svg = await downloaded("stability-trials-svg");
    expect(svg.name).toBe("stability-trials.svg");
    const svgText = svg.body.toString("utf8");
    expect(svgText).toMatch(/^<\?xml/);
    expect(svgText).toContain('data-axis="x"');
    expect(svgText).toContain('data-axis="y"');
    expect(svgText).toContain("Δt [s]");
    expect(svgText).toContain("energy growth");
    const png = await downloaded("stability-trials-png");
    const box = (await plot.boundingBox())!;
    // drawn at twice the figure's size
    expect(pngSize(png.body)).toEqual({ width: 2 * Math.round(box.width), height: 2 * Math.round(box.height) });

    const csv = csvParse((await downloaded("stability-results-csv")).body.toString("utf8"));
    expect(csv.columns).toEqual(["label", "method", "maxStableDt", "ratioToRk4", "rk4DtLimit", "bracketed", "trials", "duration", "energyGrowthThreshold"]);
    expect(csv.map((r) => r.label)).toEqual(["rk4", "ssprk3"]);
    const json = JSON.parse((await downloaded("stability-results-json")).body.toString("utf8"));
    // the same inputs through the solver directly (what `stepwell stability` prints)
    const direct = runStability(buildScenario(parseScenario(tiny)), [{ method: "rk4" }, { method: "ssprk3" }], { duration: 1200, tolerance: 0.05 }, { field: "steppers" });
    expect(withoutWall(json)).toEqual(withoutWall(direct));
    expect(Number(csv[0].maxStableDt)).toBe(direct[0].maxStableDt);
    // RK4 reaches its imaginary-axis bound 2√2 and SSPRK3 √3 (Hairer and Wanner 1996, IV.2): a ratio near √3/2√2 ≈ 0.61
    expect(direct[1].maxStableDt / direct[0].maxStableDt).toBeGreaterThan(0.45);
    expect(direct[1].maxStableDt / direct[0].maxStableDt).toBeLessThan(0.8);
    expect(errors).toEqual([]);
  });

  it("a study takes the code panel's stepper as editor:NAME, with the solver's numbers; a fault is placed in the user's text", async () => {
    // the code panel keeps code in local storage per stepper name; put Kutta's third-order example there
    const source = readFileSync(path.join(ROOT, "public/steppers/kutta3.ts"), "utf8");
    const faulty = source.replace('name: "kutta3"', 'name: "kutta3-faulty"').replace(/step\(x, t, dt\) \{/, 'step(x, t, dt) {\n        if (t > 0) throw new RangeError("deliberate");');
    expect(faulty).toContain("deliberate");
    await page.evaluate(([a, b]) => {
      localStorage.setItem("stepwell.code.kutta3", JSON.stringify({ name: "kutta3", language: "ts", source: a }));
      localStorage.setItem("stepwell.code.kutta3-faulty", JSON.stringify({ name: "kutta3-faulty", language: "ts", source: b }));
    }, [source, faulty]);
    await loadLink(tiny, "tiny-study");
    await page.click(byId("study-kind-stability"));
    await page.fill(byId("study-steppers"), "editor:kutta3");
    await page.fill(byId("study-trial-duration"), "1200");
    await page.fill(byId("study-tolerance"), "0.05");
    await runStudy();
    expect(await page.locator(byId("study-error")).count()).toBe(0);
    expect(await text("study-outcome")).toMatch(/^Done: 1 searches on tiny-study/);
    const json = JSON.parse((await downloaded("stability-results-json")).body.toString("utf8"));
    // the same module through the solver in Node, registered under the same key
    const { registerModule } = await import("../../solver/time/userModules");
    registerModule("editor:kutta3", (await import("../../public/steppers/kutta3")).default);
    const direct = runStability(buildScenario(parseScenario(tiny)), [{ method: "user-module", module: "editor:kutta3" }], { duration: 1200, tolerance: 0.05 }, { field: "steppers" });
    expect(withoutWall(json)).toEqual(withoutWall(direct));
    // Kutta's third-order method reaches √3 on the imaginary axis, RK4 2√2 (Hairer & Wanner 1996, IV.2): the ratio of
    // the two searches on the same scenario is √3/2√2 ≈ 0.612, within the brackets of 5 % each
    const [rk4] = runStability(buildScenario(parseScenario(tiny)), [{ method: "rk4" }], { duration: 1200, tolerance: 0.05 }, { field: "steppers" });
    expect(Math.abs(direct[0].maxStableDt / rk4.maxStableDt / (Math.sqrt(3) / (2 * Math.SQRT2)) - 1)).toBeLessThan(0.1);

    await page.fill(byId("study-steppers"), "rk4,editor:kutta3-faulty");
    await runStudy();
    const line = faulty.split("\n").findIndex((l) => l.includes("deliberate")) + 1;
    expect(await text("study-error")).toMatch(new RegExp(`stepper "kutta3-faulty": step at t = [\\d.]+ s threw: RangeError: deliberate \\(at line ${line}, column \\d+ of your code\\)`));

    await page.fill(byId("study-steppers"), "editor:nothing-here");
    await page.click(byId("study-run"));
    await expect.poll(() => text("study-error"), { timeout: 30_000 }).toMatch(/^steppers: editor:nothing-here: the code panel holds no stepper named "nothing-here"/);
    expect(errors).toEqual([]);
  });

  it("a sweep gives the solver's rows, orders and work-precision; its three plots and tables export", async () => {
    await page.click(byId("study-kind-sweep"));
    await page.fill(byId("study-steppers"), "rk4,ssprk3");
    await page.fill(byId("study-dt-factors"), "0.5,0.25,0.125");
    await page.fill(byId("study-duration"), "1800");
    await runStudy();
    expect(await page.locator(byId("study-error")).count()).toBe(0);
    expect(await text("study-outcome")).toMatch(/^Done: 6 runs on tiny-study/);
    for (const id of ["sweep-error-dt", "sweep-error-wall", "sweep-error-cost"]) {
      expect(Number(await page.locator(byId(id)).getAttribute("data-points"))).toBe(6);
    }
    expect(await page.locator(`${byId("sweep-error-dt")} [data-guide]`).count()).toBe(4);
    expect(await text("sweep-error-cost")).toContain("RK4 at its limit");
    await page.locator(byId("studies-panel")).screenshot({ path: shot("31-sweep-study") });

    const json = JSON.parse((await downloaded("sweep-rows-json")).body.toString("utf8"));
    const direct = runSweep(buildScenario(parseScenario(tiny)), { steppers: [{ method: "rk4" }, { method: "ssprk3" }], dtFactors: [0.5, 0.25, 0.125], duration: 1800, field: "steppers" },
      { cache: new MemoryReferenceCache() });
    // every run's figures bit for bit; the fitted orders to 1e-13 (see `differences`)
    expect(withoutWall(json.rows)).toEqual(withoutWall(direct.rows));
    expect(differences(withoutWall(json), withoutWall(direct), 1e-13)).toEqual([]);
    const csv = csvParse((await downloaded("sweep-rows-csv")).body.toString("utf8"));
    expect(csv.length).toBe(6);
    expect(csv.map((r) => Number(r.errorThickness))).toEqual(direct.rows.map((r) => r.error.thickness));
    for (const id of ["sweep-error-dt", "sweep-error-wall", "sweep-error-cost"]) {
      const s = (await downloaded(`${id}-svg`)).body.toString("utf8");
      expect(s).toContain('data-axis="x"');
      expect(s).toContain('data-axis="y"');
      const b = (await page.locator(byId(id)).boundingBox())!;
      expect(pngSize((await downloaded(`${id}-png`)).body)).toEqual({ width: 2 * Math.round(b.width), height: 2 * Math.round(b.height) });
    }
    const orders = csvParse((await downloaded("sweep-orders-csv")).body.toString("utf8"));
    expect(orders.map((r) => r.label)).toEqual(["rk4", "ssprk3"]);
    expect(errors).toEqual([]);
  });

  it("cancel stops a study at once and says how much had finished", async () => {
    await page.fill(byId("study-dt-factors"), "0.5,0.25,0.125,0.0625,0.03125");
    await page.fill(byId("study-duration"), "86400");
    await page.click(byId("study-run"));
    await expect.poll(() => page.locator(byId("study-progress")).getAttribute("value"), { timeout: 60_000 }).not.toBe("0");
    await page.click(byId("study-cancel"));
    await expect.poll(() => page.locator(byId("study-status")).getAttribute("data-state"), { timeout: 10_000 }).toBe("cancelled");
    expect(await text("study-outcome")).toMatch(/^Cancelled after [\d.]+ s: \d+ of 10 runs had finished/);
    await page.locator(byId("studies-panel")).screenshot({ path: shot("32-study-cancelled") });
    // the pool starts fresh workers for the next study
    await page.fill(byId("study-dt-factors"), "0.5,0.25");
    await page.fill(byId("study-duration"), "600");
    await runStudy();
    expect(await text("study-outcome")).toMatch(/^Done: 4 runs/);
    expect(errors).toEqual([]);
  });
});

describe("run view: pointer values, colour scale, inspector, exports, shortcuts", () => {
  it("shows the cell value under the pointer with units and the position in km", async () => {
    await loadLink({ ...tiny, name: "tiny-view", duration: 86400 }, "tiny-view");
    const box = await mapBox();
    await page.mouse.move(box.x + box.width * 0.5, box.y + box.height * 0.5);
    const hover = await page.locator(byId("map-hover")).innerText();
    expect(hover).toMatch(/^-?[\d.e+-]+ m$/m);
    expect(hover).toMatch(/x [\d.]+ km · y [\d.]+ km/);
    await page.selectOption(byId("field-picker"), "speed");
    await page.mouse.move(box.x + box.width * 0.4, box.y + box.height * 0.5);
    await expect.poll(() => page.locator(byId("map-hover")).innerText()).toMatch(/ m\/s$/m);
    await page.selectOption(byId("field-picker"), "surface");
  });

  it("the colour scale can be held fixed while the field changes, and follow it again (button and F key)", async () => {
    expect(await text("colour-mode")).toBe("follows the field");
    await page.click(byId("colour-toggle"));
    expect(await text("colour-mode")).toBe("fixed scale");
    const lo = await page.inputValue(byId("colour-lo"));
    const hi = await page.inputValue(byId("colour-hi"));
    expect(Number(hi)).toBeGreaterThan(Number(lo));
    // the bump spreads out: the field's range changes, the held colours do not
    const range0 = await text("field-range");
    await page.click(byId("run-button"));
    await expect.poll(() => text("field-range"), { timeout: 30_000 }).not.toBe(range0);
    await page.click(byId("run-button"));
    expect(await page.inputValue(byId("colour-lo"))).toBe(lo);
    expect(await page.inputValue(byId("colour-hi"))).toBe(hi);
    await page.fill(byId("colour-hi"), String(Number(hi) * 2));
    await expect.poll(() => page.locator(`${byId("colour-bar")} svg`).getAttribute("aria-label")).toContain(String(Number(hi) * 2));
    await page.locator(byId("field-map")).screenshot({ path: shot("33-colour-fixed") });
    await page.click(byId("scenario-name")); // out of the number field: keys typed there are the field's
    await page.keyboard.press("f");
    expect(await text("colour-mode")).toBe("follows the field");
    await page.keyboard.press("f");
    expect(await text("colour-mode")).toBe("fixed scale");
    await page.click(byId("colour-toggle"));
  });

  it("pause-and-inspect stops the run and lists every field at a clicked cell with units", async () => {
    await page.click(byId("run-button"));
    await expect.poll(() => text("run-button")).toBe("Pause");
    await page.keyboard.press("i");
    await expect.poll(() => text("run-button")).toBe("Run");
    await expect.poll(() => text("inspector")).toContain("Click a cell");
    const box = await mapBox();
    await page.mouse.click(box.x + box.width * 0.5, box.y + box.height * 0.5);
    await expect.poll(() => text("inspector-where"), { timeout: 10_000 }).toMatch(/^cell \d+ at x [\d.]+ km, y [\d.]+ km · step \d+/);
    expect(await text("inspect-surface")).toMatch(/Free-surface height-?[\d.e+-]+ m$/);
    expect(await text("inspect-thickness-1")).toMatch(/layer 1[\d.e+-]+ m$/);
    expect(await text("inspect-speed-0")).toMatch(/ m\/s$/);
    // the thicknesses add up to the nominal depth plus the surface height (two flat layers, no topography)
    const num = async (id: string) => Number((await text(id)).replace(/^.*?layer \d|^Free-surface height/, "").replace(/ m$/, ""));
    const h = (await num("inspect-thickness-0")) + (await num("inspect-thickness-1"));
    expect(h - 4000).toBeCloseTo(await num("inspect-surface"), 2); // 8 significant digits shown
    await page.screenshot({ path: shot("34-inspect") });
    await page.keyboard.press("Escape");
    await expect.poll(() => page.locator(byId("inspector")).count()).toBe(0);
  });

  it("lists the keyboard shortcuts in the page; ? hides and shows them", async () => {
    const list = await text("shortcut-list");
    for (const k of ["Space", "run or pause", "inspect", "colour scale"]) expect(list).toContain(k);
    await page.keyboard.press("?");
    await expect.poll(() => page.locator(byId("shortcut-list")).count()).toBe(0);
    expect(await text("shortcut-hint")).toContain("?");
    await page.keyboard.press("?");
    await page.locator(byId("shortcut-list")).waitFor();
    await page.locator(byId("view-tools")).screenshot({ path: shot("35-view-tools") });
  });

  it("exports the map as PNG at its canvas size and the plots beside it as SVG", async () => {
    const png = await downloaded("export-map-png");
    expect(png.name).toBe("map-surface.png");
    const c = page.locator(byId("map-canvas"));
    expect(pngSize(png.body)).toEqual({ width: Number(await c.getAttribute("width")), height: Number(await c.getAttribute("height")) });
    const svg = (await downloaded("export-mass-plot-svg")).body.toString("utf8");
    expect(svg).toMatch(/^<\?xml[^>]*>\s*<svg[^>]*xmlns="http:\/\/www.w3.org\/2000\/svg"/);
    expect(svg).toContain("simulated days");
  });

  it("saves a NetCDF snapshot of the current state that a general NetCDF reader opens (netcdfjs 4.0.0)", async () => {
    const nc = await downloaded("export-netcdf");
    const steps = Number(await text("step-count"));
    expect(nc.name).toBe(`tiny-view-step${steps}.nc`);
    // "CDF" and version byte 2: the 64-bit offset format (NetCDF User's Guide, file format appendix)
    expect([...nc.body.subarray(0, 4)]).toEqual([0x43, 0x44, 0x46, 0x02]);
    const r = new NetCDFReader(nc.body);
    expect(r.recordDimension.length).toBe(1);
    expect(r.dimensions.find((d) => d.name === "face")!.size).toBe(Number(await page.locator(byId("map-canvas")).getAttribute("data-cells")));
    expect((r.getDataVariable("step") as number[]).flat()).toEqual([steps]);
    // the file's free surface has the range the colour bar reports (single precision there, 4 significant digits)
    const eta = (r.getDataVariable("surface_height") as number[][])[0];
    const shown = /max (\S+) m\s*min (\S+) m/.exec(await text("field-range"))!;
    const near = (a: number, b: number) => Math.abs(a - b) <= 1e-3 * Math.max(Math.abs(a), Math.abs(b));
    expect(near(Math.max(...eta), Number(shown[1]))).toBe(true);
    expect(near(Math.min(...eta), Number(shown[2]))).toBe(true);
    expect(errors).toEqual([]);
  });
});

describe("a run started from a stored state", () => {
  it("starts a built-in from a state file generated here (60 RK4 steps of ring-wave), shows it, and Reset returns to it", async () => {
    const dir = mkdtempSync(path.join(tmpdir(), "stepwell-state-"));
    const raw = builtinScenario("ring-wave")!;
    const run = createRun(raw);
    run.advance(60);
    const file = path.join(dir, "ring-wave-spun-up.nc");
    writeFileSync(file, netcdfSnapshot(run));
    const eta = new Float64Array(run.mesh.nCells);
    const range = computeField(eta, "surface", 0, run.model, run.state, fieldWork(run.model));

    await loadLink(raw, "ring-wave");
    const before = await text("field-range");
    await page.setInputFiles(byId("start-state-input"), file);
    await expect.poll(() => text("start-state-info"), { timeout: 30_000 }).toMatch(/^Started from ring-wave-spun-up\.nc \(ring-wave, stored at 1\.00 h, step 60\)/);
    expect(await text("step-count")).toBe("0");
    const shown = async () => /max (\S+) m\s*min (\S+) m/.exec(await text("field-range"))!.slice(1).map(Number);
    // the map is the stored state: the range the worker computes equals the one computed here (4 digits shown)
    expect(await shown()).toEqual([Number(range.max.toPrecision(4)), Number(range.min.toPrecision(4))]);
    expect(await text("field-range")).not.toBe(before);
    await page.screenshot({ path: shot("36-started-from-state") });
    await page.click(byId("run-button"));
    await expect.poll(async () => Number(await text("step-count")), { timeout: 30_000 }).toBeGreaterThan(3);
    await page.click(byId("run-button"));
    await page.click(byId("reset-button"));
    await expect.poll(() => text("step-count")).toBe("0");
    expect(await shown()).toEqual([Number(range.max.toPrecision(4)), Number(range.min.toPrecision(4))]);

    // a state of another mesh is refused in one line naming the field, and the run stays as it was
    const other = createRun(tiny);
    const wrong = path.join(dir, "tiny.nc");
    writeFileSync(wrong, netcdfSnapshot(other));
    await page.setInputFiles(byId("start-state-input"), wrong);
    await expect.poll(() => text("start-state-error"), { timeout: 30_000 }).toMatch(/^startState: tiny\.nc holds a mesh of 144 cells and \d+ edges; scenario "ring-wave" has 2304 cells/);
    expect(await shown()).toEqual([Number(range.max.toPrecision(4)), Number(range.min.toPrecision(4))]);
    expect(errors).toEqual([]);
  });
});
