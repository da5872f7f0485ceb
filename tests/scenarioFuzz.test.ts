import { describe, expect, it } from "vitest";
import { mkdtempSync, readFileSync, writeFileSync, existsSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { main } from "../solver/cli/main";
import { BUILTIN_SCENARIOS } from "../solver/scenario/builtins";
import { seededRandom } from "../solver/mesh/hexLattice";

/**
 * Scenario fuzzing (common practice, no source: mutation-based input fuzzing): 300 scenario files made by
 * mutating valid ones — wrong types, missing and extra fields, out-of-range and non-finite numbers, empty and
 * huge arrays. Each must either run (a result, possibly "unstable") or be refused with exit 2 and one line that
 * names a field; never a stack trace, an internal error or a hang.
 */
const dir = mkdtempSync(join(tmpdir(), "stepwell-fuzz-"));
const rnd = seededRandom(20261203);
const pick = <T>(xs: readonly T[]): T => xs[Math.floor(rnd() * xs.length)];

/** Paths to every value of a JSON tree. */
function paths(v: unknown, prefix: (string | number)[] = []): (string | number)[][] {
  const out: (string | number)[][] = [prefix];
  if (Array.isArray(v)) v.forEach((x, i) => out.push(...paths(x, [...prefix, i])));
  else if (v && typeof v === "object") for (const [k, x] of Object.entries(v)) out.push(...paths(x, [...prefix, k]));
  return out;
}
function getAt(v: unknown, p: (string | number)[]): unknown {
  return p.reduce<unknown>((o, k) => (o as Record<string | number, unknown>)?.[k], v);
}
function setAt(v: unknown, p: (string | number)[], x: unknown, remove = false): void {
  const parent = getAt(v, p.slice(0, -1)) as Record<string | number, unknown>;
  const k = p[p.length - 1];
  if (remove) { if (Array.isArray(parent)) parent.splice(Number(k), 1); else delete parent[k]; } else parent[k] = x;
}

const weird: unknown[] = [-1, 0, 1e300, -1e300, 1e9, 2.5, 7, "12", "", "NaN", null, true, [], {}, [1, 2], { type: "nope" }, 1e-300];
/** A mutation as JSON text (1e999 is how a file can hold a non-finite number). */
function mutate(base: Record<string, unknown>): string {
  const s = JSON.parse(JSON.stringify(base)) as Record<string, unknown>;
  const n = 1 + Math.floor(rnd() * 2);
  let text: string | undefined;
  for (let m = 0; m < n; m++) {
    const ps = paths(s).filter((p) => p.length > 0);
    const p = pick(ps);
    const kind = Math.floor(rnd() * 7);
    if (kind === 0) setAt(s, p, pick(weird));
    else if (kind === 1) setAt(s, p, undefined, true);
    else if (kind === 2) { const o = getAt(s, p.slice(0, -1)); if (o && typeof o === "object" && !Array.isArray(o)) (o as Record<string, unknown>)[pick(["extra", "colour", "units", "dx"])] = 1; else setAt(s, p, "oops"); }
    else if (kind === 3) { const v = getAt(s, p); if (typeof v === "number") setAt(s, p, v * pick([-1, 0, 1e6, 1e-9, 1e12])); else setAt(s, p, 3); }
    else if (kind === 4) { const v = getAt(s, p); if (Array.isArray(v)) setAt(s, p, rnd() < 0.5 ? [] : Array.from({ length: pick([40, 5000, 200000]) }, () => v[0] ?? 1)); else setAt(s, p, [v]); }
    else if (kind === 5) { const v = getAt(s, p); if (typeof v === "number") text = "NONFINITE"; setAt(s, p, typeof v === "number" ? 424242.4242 : v); }
    else setAt(s, p, pick(["rk4", "split-explicit", "etdrk4", "no-such-method", "modes:9"]));
  }
  const json = JSON.stringify(s);
  return text ? json.replace("424242.4242", pick(["1e999", "-1e999"])) : json;
}

async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = "", err = "";
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; });
  return { code, out, err };
}

describe("scenario fuzzing: 300 mutated scenario files", () => {
  const cases: string[] = [];
  for (let i = 0; i < 300; i++) cases.push(mutate(pick(BUILTIN_SCENARIOS) as unknown as Record<string, unknown>));
  const groups = 10;
  for (let g = 0; g < groups; g++) {
    it(`files ${g * 30 + 1}–${g * 30 + 30}: each runs or is refused with exit 2 naming a field`, async () => {
      for (let i = g * 30; i < g * 30 + 30; i++) {
        const file = join(dir, `case-${i}.json`);
        const json = join(dir, `case-${i}.out.json`);
        writeFileSync(file, cases[i]);
        const r = await cli("run", file, "--steps", "2", "--quiet", "--json", json);
        const where = `case ${i}: ${cases[i].slice(0, 300)}`;
        expect(r.err, where).not.toMatch(/internal error|\n\s+at |TypeError|RangeError/);
        if (r.code === 0) {
          expect(existsSync(json), where).toBe(true);
          expect(["completed", "unstable"], where).toContain(JSON.parse(readFileSync(json, "utf8")).status);
        } else {
          expect(r.code, where).toBe(2);
          const lines = r.err.trim().split("\n");
          expect(lines, where).toHaveLength(1);
          // the message starts with the field (a dotted path, an array index, or SCENARIO for the file itself)
          expect(lines[0], where).toMatch(/^stepwell run: (SCENARIO|[a-zA-Z][\w-]*(\[\d+\])*(\.[\w-]+(\[\d+\])*)*(–\[\d+\])?)[: ]/);
        }
      }
    }, 120_000);
  }
});
