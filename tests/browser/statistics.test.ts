/**
 * Browser test of the statistics study in the page: ensemble members and rows in the worker pool, the result equal
 * to the solver's `runStatistics` for the same inputs, maps of the reference statistic and of each stepper's error
 * with the noise floor stated, and their exports. Screenshot: test-output/screenshots/37-statistics-study.png.
 */
import { readFileSync } from "node:fs";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { Download, Page } from "playwright-core";
import { csvParse } from "d3";
import { encodeSetup } from "../../app/share";
import { buildScenario } from "../../solver/scenario/build";
import { parseScenario } from "../../solver/scenario/schema";
import { MemoryReferenceCache } from "../../solver/studies/reference";
import { runStatistics } from "../../solver/studies/statistics";
import { byId, openApp, shot, startSandbox, type Sandbox } from "./harness";

let sb: Sandbox;
let page: Page;
const errors: string[] = [];
beforeAll(async () => {
  sb = await startSandbox();
  page = await openApp(sb, "", errors);
});
afterAll(async () => { await sb?.close(); });

const tiny = {
  name: "tiny-stats", description: "test scenario for the statistics study",
  mesh: { type: "periodic-hex", cellsX: 12, cellsY: 12, spacing: 20000 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 3500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
  initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 60 }, duration: 3600,
};
const text = async (id: string) => (await page.locator(byId(id)).textContent()) ?? "";
const withoutWall = (v: unknown) => JSON.parse(JSON.stringify(v, (k, x) => (k === "wallSeconds" ? undefined : x)));

async function downloaded(testid: string): Promise<{ name: string; body: Buffer }> {
  const [dl] = await Promise.all([page.waitForEvent("download", { timeout: 30_000 }), page.click(byId(testid))]) as [Download, unknown];
  return { name: dl.suggestedFilename(), body: readFileSync((await dl.path())!) };
}

describe("statistics study in the page", () => {
  it("gives runStatistics' result, maps the reference and each stepper's error with the noise floor, and exports them", async () => {
    await page.evaluate((h) => { window.location.hash = h; }, `#${encodeSetup(tiny)}`);
    await expect.poll(() => text("scenario-name"), { timeout: 60_000 }).toContain("tiny-stats");
    await page.click(byId("study-kind-statistics"));
    await page.fill(byId("study-steppers"), "rk4,ssprk3");
    await page.fill(byId("study-stat-dt-factors"), "0.5,0.25");
    await page.fill(byId("study-spin-up"), "1200");
    await page.fill(byId("study-window"), "2400");
    await page.fill(byId("study-sample-every"), "600");
    await page.fill(byId("study-ensemble"), "2");
    await page.click(byId("study-run"));
    await expect.poll(() => page.locator(byId("study-status")).getAttribute("data-state"), { timeout: 240_000, interval: 500 }).not.toBe("running");
    expect(await page.locator(byId("study-error")).count()).toBe(0);
    expect(await text("study-outcome")).toMatch(/^Done: 4 runs on tiny-stats/);

    const json = JSON.parse((await downloaded("statistics-rows-json")).body.toString("utf8"));
    const direct = runStatistics(buildScenario(parseScenario(tiny)), {
      steppers: [{ method: "rk4" }, { method: "ssprk3" }], dtFactors: [0.5, 0.25], spinUp: 1200, window: 2400, sampleEvery: 600, ensemble: 2, field: "steppers",
    }, { cache: new MemoryReferenceCache() });
    expect(withoutWall(json)).toEqual(withoutWall(direct));

    expect(await text("statistics-floor")).toMatch(/^noise floor [\d.e+-]+ \(largest difference between 2 reference runs/);
    expect(await page.locator(byId("statistics-reference-map")).count()).toBe(1);
    expect(await page.locator('svg[data-testid^="statistics-error-map-"]').count()).toBe(2);
    await page.locator(byId("studies-panel")).screenshot({ path: shot("37-statistics-study") });
    const svg = (await downloaded("statistics-error-map-0-svg")).body.toString("utf8");
    expect(svg).toContain("<image");
    expect(svg).toContain("[m]");
    const png = (await downloaded("statistics-reference-map-png")).body;
    expect([...png.subarray(1, 4)].map((c) => String.fromCharCode(c)).join("")).toBe("PNG");
    const box = (await page.locator(byId("statistics-reference-map")).boundingBox())!;
    expect([png.readUInt32BE(16), png.readUInt32BE(20)]).toEqual([2 * Math.round(box.width), 2 * Math.round(box.height)]);
    const csv = csvParse((await downloaded("statistics-rows-csv")).body.toString("utf8"));
    expect(csv.map((r) => Number(r.error_meanSurface))).toEqual(direct.rows.map((r) => r.errors.meanSurface ?? NaN).map((v) => (Number.isNaN(v) ? 0 : v)));
    // a layer statistic offers the layer and redraws
    await page.selectOption(byId("statistics-field"), "meanKineticEnergy");
    await page.selectOption(byId("statistics-layer"), "1");
    expect(await page.locator(byId("statistics-reference-map")).getAttribute("aria-label")).toContain("layer 1");
    expect(errors).toEqual([]);
  });
});
