import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { main } from "../solver/cli/main";

/**
 * Every command of the README runs (common practice, no source: documentation examples are executed so that
 * they cannot rot). Commands are taken from the ```sh and ```bash blocks; each `stepwell` command runs
 * in-process from a scratch directory, with long runs shortened (a cap on --duration, a few steps for `run`)
 * — the shortening is the only change. Lines that need other programs (npm install/start/test, the benchmark,
 * the Slurm scheduler) are listed and skipped; a GNU parallel line runs its command once per argument.
 */
const readme = readFileSync(join(__dirname, "..", "README.md"), "utf8");
const blocks = [...readme.matchAll(/```(?:sh|bash)\n([\s\S]*?)```/g)].map((m) => m[1]);
const PREFIX = "npm run --silent stepwell -- ";
const MAX_DURATION = 3600;

/** Split a shell line into words (single and double quotes, no expansions). */
function words(line: string): string[] {
  const out: string[] = [];
  let cur = "", quote = "", any = false;
  for (const ch of line) {
    if (quote) { if (ch === quote) quote = ""; else cur += ch; continue; }
    if (ch === "'" || ch === '"') { quote = ch; any = true; continue; }
    if (/\s/.test(ch)) { if (cur || any) out.push(cur); cur = ""; any = false; continue; }
    cur += ch;
  }
  if (cur || any) out.push(cur);
  return out;
}

/** The README's stepwell commands, with shell variables of the same block substituted and continuations joined. */
function commands(): { line: string; argv: string[] }[] {
  const out: { line: string; argv: string[] }[] = [];
  for (const block of blocks) {
    const vars: Record<string, string> = {};
    const lines = block.replace(/\\\n\s*/g, " ").split("\n").map((l) => l.replace(/\s+#.*$/, "").trim()).filter(Boolean);
    for (const raw of lines) {
      const assign = /^([A-Z]+)="(.*)"$/.exec(raw);
      if (assign) { vars[assign[1]] = assign[2]; continue; }
      const line = raw.replace(/\$([A-Z]+)/g, (_, v: string) => vars[v] ?? "");
      if (/sbatch|SLURM|^#/.test(line)) continue;
      const par = /^parallel .*?"(npm run --silent stepwell -- .*)" ::: (.*)$/.exec(line);
      if (par) {
        for (const v of par[2].split(/\s+/)) out.push({ line, argv: words(par[1].replace(/\{\}/g, v).slice(PREFIX.length)) });
        continue;
      }
      const at = line.indexOf(PREFIX);
      if (at < 0) continue;
      out.push({ line, argv: words(line.slice(at + PREFIX.length)) });
    }
  }
  return out;
}

/** The shortening: --duration capped, `run` limited to a few steps, `assess` and `stability` to short trials, `statistics` to one sample. */
function shorten(argv: string[]): string[] {
  const a = [...argv];
  const d = a.indexOf("--duration");
  const netcdf = a.includes("--netcdf") || a.includes("--restart"); // documented short already; restarts need the output times
  if (d >= 0 && Number(a[d + 1]) > MAX_DURATION && !netcdf) a[d + 1] = String(MAX_DURATION);
  // runs that write or read NetCDF are documented short already (and a restart needs its output times)
  if (a[0] === "run" && !a.includes("--steps") && !a.includes("--netcdf") && !a.includes("--restart")) {
    if (d >= 0) a.splice(d, 2);
    a.push("--steps", "5");
  }
  if ((a[0] === "assess" || a[0] === "stability") && d < 0) a.push("--duration", "1800");
  if (a[0] === "statistics") {
    // no spin-up and a window of one sample interval (6 h unless the command gives one)
    const set = (k: string, v: string) => { const i = a.indexOf(k); if (i >= 0) a[i + 1] = v; else a.push(k, v); };
    const s = a.indexOf("--sample-every");
    const every = s >= 0 ? a[s + 1] : "21600";
    set("--spin-up", "0");
    set("--window", every);
    set("--sample-every", every);
  }
  return a;
}

const list = commands();
let scratch = "";
const saved = { init: process.env.INIT_CWD, cache: process.env.STEPWELL_CACHE_DIR };

describe("every command in the README runs", () => {
  beforeAll(() => {
    scratch = mkdtempSync(join(tmpdir(), "stepwell-readme-"));
    mkdirSync(join(scratch, "parts"), { recursive: true });
    process.env.INIT_CWD = scratch;
    process.env.STEPWELL_CACHE_DIR = join(scratch, ".stepwell-cache");
  });
  afterAll(() => {
    process.env.INIT_CWD = saved.init;
    if (saved.cache === undefined) delete process.env.STEPWELL_CACHE_DIR; else process.env.STEPWELL_CACHE_DIR = saved.cache;
  });

  it("finds the documented commands", () => {
    expect(list.length).toBeGreaterThan(10);
    for (const cmd of ["run", "modes", "scenarios", "stability", "sweep", "statistics", "merge", "template", "assess"]) {
      expect(list.some((c) => c.argv[0] === cmd), cmd).toBe(true);
    }
  });

  for (const [i, c] of list.entries()) {
    it(`${i + 1}: ${c.argv.join(" ").slice(0, 140)}`, async () => {
      let out = "", err = "";
      const repo = join(__dirname, "..");
      // files of the repository (e.g. public/steppers/…) as from its root; globs expanded as a shell would
      const argv = shorten(c.argv).flatMap((w) => {
        if (!w.startsWith("-") && /[/.]/.test(w) && existsSync(join(repo, w))) return [join(repo, w)];
        const g = /^(.*\/)?([^/]*\*[^/]*)$/.exec(w);
        if (g) {
          const d = join(scratch, g[1] ?? "");
          const re = new RegExp("^" + g[2].replace(/[.+^${}()|[\]\\]/g, "\\$&").replace(/\*/g, ".*") + "$");
          return readdirSync(d).filter((f) => re.test(f)).sort().map((f) => join(d, f));
        }
        return [w];
      });
      const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; });
      expect(err, `${c.line}\n${err}`).not.toMatch(/internal error|\n\s+at /);
      expect(code, `${c.line}\n${err}`).toBe(0);
      expect(out.length + err.length).toBeGreaterThan(0);
    }, 240_000);
  }
});
