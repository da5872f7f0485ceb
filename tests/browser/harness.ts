/**
 * Shared set-up of the browser tests: a Vite dev server on a free loopback port, started in-process, and
 * Debian's Chromium driven by playwright-core. Screenshots go to test-output/screenshots/ (gitignored).
 */
import { mkdirSync } from "node:fs";
import { createServer as createNetServer } from "node:net";
import { fileURLToPath } from "node:url";
import path from "node:path";
import { chromium, type Browser, type Page } from "playwright-core";
import { createServer, type ViteDevServer } from "vite";

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "../..");
export const SCREENSHOTS = path.join(ROOT, "test-output", "screenshots");
export const CHROMIUM = process.env.STEPWELL_CHROMIUM ?? "/usr/bin/chromium";

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createNetServer();
    s.once("error", reject);
    s.listen(0, "127.0.0.1", () => {
      const a = s.address();
      const port = typeof a === "object" && a ? a.port : 0;
      s.close(() => resolve(port));
    });
  });
}

export interface Sandbox {
  server: ViteDevServer;
  browser: Browser;
  baseUrl: string;
  close(): Promise<void>;
}

export async function startSandbox(): Promise<Sandbox> {
  mkdirSync(SCREENSHOTS, { recursive: true });
  const port = await freePort();
  const server = await createServer({
    root: ROOT,
    configFile: path.join(ROOT, "vite.config.ts"),
    logLevel: "error",
    clearScreen: false,
    // a cache of its own so that a developer's `npm start` and the tests never write the same folder
    cacheDir: path.join(ROOT, "node_modules", ".vite-browser-tests"),
    server: { host: "127.0.0.1", port, strictPort: true, hmr: false, watch: null },
    // crawl the worker too and pre-bundle up front, so no late discovery reloads a page in the middle of a test
    optimizeDeps: {
      entries: ["index.html", "workers/simulation.worker.ts", "workers/assess.worker.ts"],
      include: ["react", "react-dom", "react-dom/client", "react/jsx-dev-runtime", "d3", "comlink", "zod",
        "codemirror", "@codemirror/lang-javascript", "@codemirror/lint", "sucrase", "@jridgewell/trace-mapping"],
    },
  });
  await server.listen();
  const browser = await chromium.launch({
    executablePath: CHROMIUM,
    args: ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update", "--disable-sync"],
  });
  return {
    server, browser, baseUrl: `http://127.0.0.1:${port}/`,
    async close() {
      await browser.close();
      await server.close();
    },
  };
}

/** Open the app and collect console errors and uncaught page errors into `errors`. */
export async function openApp(sb: Sandbox, hash = "", errors: string[] = []): Promise<Page> {
  const page = await sb.browser.newPage({ viewport: { width: 1280, height: 800 } });
  page.on("console", (m) => { if (m.type() === "error") errors.push(m.text()); });
  page.on("pageerror", (e) => errors.push(`page error: ${e.message}`));
  await page.goto(sb.baseUrl + hash);
  await page.waitForSelector('[data-testid="app"][data-ready="yes"]', { timeout: 60_000 });
  return page;
}

export function shot(name: string): string {
  return path.join(SCREENSHOTS, `${name}.png`);
}

/** A small fingerprint of the map's pixels (sum of bytes weighted by position), to see that they changed. */
export async function mapFingerprint(page: Page): Promise<number> {
  return page.evaluate(() => {
    const c = document.querySelector('[data-testid="map-canvas"]') as HTMLCanvasElement;
    const d = c.getContext("2d")!.getImageData(0, 0, c.width, c.height).data;
    let h = 0;
    for (let i = 0; i < d.length; i += 4) h = (h * 31 + d[i] * 7 + d[i + 1] * 3 + d[i + 2]) % 2147483647;
    return h;
  });
}

export const byId = (id: string) => `[data-testid="${id}"]`;
