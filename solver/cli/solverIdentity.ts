import { createHash } from "node:crypto";
import { readdirSync, readFileSync } from "node:fs";
import { join, relative, sep } from "node:path";
import { fileURLToPath } from "node:url";

let cached: string | null = null;

/**
 * Identity of the code that computes results: the package version and a SHA-256 over the solver's source (every
 * file under solver/ except the command line in solver/cli/, in sorted path order, each as its path and its
 * bytes). Any edit to the numerics changes it, so cached results computed by other code are not used.
 */
export function solverIdentity(): string {
  if (cached) return cached;
  const pkg = JSON.parse(readFileSync(fileURLToPath(new URL("../../package.json", import.meta.url)), "utf8")) as { version?: string };
  cached = `stepwell ${pkg.version ?? "?"} solver ${sourceHash(fileURLToPath(new URL("..", import.meta.url)))}`;
  return cached;
}

/** SHA-256 (first 16 hex digits) over the files under `solverDir` except its cli/ folder: sorted relative paths, each followed by the file's bytes. */
export function sourceHash(solverDir: string): string {
  const files: string[] = [];
  const skip = join(solverDir, "cli");
  const walk = (dir: string) => {
    for (const e of readdirSync(dir, { withFileTypes: true })) {
      const p = join(dir, e.name);
      if (e.isDirectory()) { if (p !== skip) walk(p); } else if (e.isFile()) files.push(p);
    }
  };
  walk(solverDir);
  const rel = files.map((f) => relative(solverDir, f).split(sep).join("/")).sort();
  const h = createHash("sha256");
  for (const r of rel) h.update(r).update("\0").update(readFileSync(join(solverDir, r))).update("\0");
  return h.digest("hex").slice(0, 16);
}
