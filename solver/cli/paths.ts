import { dirname, isAbsolute, resolve } from "node:path";

/**
 * The directory the user started the command in. `npm run` moves to the package root and passes the directory it
 * was started in as INIT_CWD (`npx` stays where it is and passes the same). INIT_CWD is trusted only while the
 * process still stands in the package root npm moved it to, so that an INIT_CWD inherited from some outer npm
 * script that then changed directory does not win over the real working directory.
 */
export function startDirectory(env: NodeJS.ProcessEnv = process.env, cwd: string = process.cwd()): string {
  const init = env.INIT_CWD;
  const pkg = env.npm_package_json;
  if (init && isAbsolute(init) && (!pkg || resolve(dirname(pkg)) === resolve(cwd))) return init;
  return cwd;
}

/** A path given on the command line (or in an environment variable), resolved from where the user started. */
export function userPath(p: string): string {
  return resolve(startDirectory(), p);
}

/** Names of the fields of a JSON input file whose string values are file paths (a stepper's own module). */
export const PATH_FIELDS: readonly string[] = ["module"];

/** A relative file path or module specifier ("./x.ts", "../lib/y.mjs", "steppers/z.ts"); package names ("pkg", "@scope/pkg") and URLs are not. */
function isRelativePath(p: string): boolean {
  if (p === "" || isAbsolute(p) || /^[a-zA-Z][a-zA-Z0-9+.-]*:/.test(p) || p.startsWith("@")) return false;
  return p.startsWith("./") || p.startsWith("../") || p.startsWith(".\\") || p.startsWith("..\\") || /[\\/]/.test(p) || /\.[cm]?[jt]s$/.test(p);
}

/**
 * Paths inside a JSON file resolve from that file's directory, not from wherever the command runs: returns a copy
 * of `value` in which every string under a key of PATH_FIELDS that is a relative path is made absolute.
 */
export function resolvePathsInFile<T>(value: T, file: string): T {
  const dir = dirname(resolve(file));
  const walk = (v: unknown): unknown => {
    if (Array.isArray(v)) return v.map(walk);
    if (!v || typeof v !== "object") return v;
    const o: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v as Record<string, unknown>)) {
      o[k] = PATH_FIELDS.includes(k) && typeof x === "string" && isRelativePath(x) ? resolve(dir, x) : walk(x);
    }
    return o;
  };
  return walk(value) as T;
}
