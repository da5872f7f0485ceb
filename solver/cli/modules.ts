/**
 * User stepper modules on the command line: a `.js`, `.mjs` or `.ts` file whose default export is a stepper
 * definition. The file is imported (TypeScript through the tsx loader the CLI runs under), its export checked,
 * and the definition registered under the file's absolute path, so every spec that names it — in `run`, a
 * scenario, a `--steppers` file, a study slice — builds it like a built-in.
 */
import { existsSync, readFileSync, statSync } from "node:fs";
import { register as registerHooks } from "node:module";
import { dirname, extname, isAbsolute, resolve } from "node:path";
import { pathToFileURL } from "node:url";
import { SolverError } from "../errors.js";
import { registerModule } from "../time/userModules.js";
import type { StepperDefinition } from "../time/interface.js";
import { builtinScenario } from "../scenario/builtins.js";
import { isEditorModule } from "../scenario/stepperCode.js";
import type { ParsedArgs } from "./args.js";
import { startDirectory } from "./paths.js";

/** The directory the user started the command in (see paths.ts). */
export const userDirectory = startDirectory;

/** A path as the user meant it: relative to `base` (a JSON file's directory) or to where the command started. */
export function userPath(p: string, base = startDirectory()): string {
  return isAbsolute(p) ? p : resolve(base, p);
}

const EXTENSIONS = [".js", ".mjs", ".ts", ".mts"];
const loaded = new Map<string, StepperDefinition>();

/** Import and check a stepper module; one clear error naming `field` for every way it can be wrong. */
export async function loadStepperModule(path: string, field: string, base?: string): Promise<{ key: string; definition: StepperDefinition }> {
  const abs = userPath(path, base);
  const known = loaded.get(abs);
  if (known) return { key: abs, definition: known };
  if (!existsSync(abs) || !statSync(abs).isFile()) throw new SolverError("bad-input", `${field}: stepper module file not found: ${abs}`, field);
  if (!EXTENSIONS.includes(extname(abs))) throw new SolverError("bad-input", `${field}: ${abs} must be a .js, .mjs or .ts file`, field);
  let mod: Record<string, unknown>;
  try {
    mod = (await import(moduleUrl(abs))) as Record<string, unknown>;
  } catch (e) {
    const err = e as Error;
    const at = /(\S+\.m?[jt]s)(?:\?[\w-]+)?:(\d+):(\d+)/.exec(err?.stack ?? "")?.slice(1, 4).join(":");
    throw new SolverError("bad-input", `${field}: cannot load ${abs}: ${err?.message?.split("\n")[0] ?? String(e)}${at ? ` (at ${at})` : ""}`, field);
  }
  if (mod.default === undefined) {
    throw new SolverError("bad-input", `${field}: ${abs} has no default export; write \`export default { name, order, description, create }\``, field);
  }
  const definition = registerModule(abs, mod.default, abs);
  loaded.set(abs, definition);
  return { key: abs, definition };
}

/**
 * A user's module is always an ES module, wherever it is saved: outside a package.json with "type": "module", Node
 * would read a `.ts` or `.js` file as CommonJS, where `export default` fails. A resolve hook (moduleFormatHook.mjs, node:module
 * `register`, registered once per thread) gives the format "module" to every URL carrying MODULE_QUERY and passes the query on
 * to the files such a module imports by relative path; the TypeScript loader the CLI runs under then strips types as
 * usual. Locations in messages drop the query (see time/instantiate.ts).
 */
export const MODULE_QUERY = "stepwell-module";
let formatHook = false;
function moduleUrl(abs: string): string {
  const ext = extname(abs);
  if (ext === ".mjs" || ext === ".mts") return pathToFileURL(abs).href;
  if (!formatHook) {
    formatHook = true;
    try { registerHooks("./moduleFormatHook.mjs", import.meta.url); } catch { /* a host without module hooks: Node's own rule applies */ }
  }
  return `${pathToFileURL(abs).href}?${MODULE_QUERY}`;
}

/** A module loaded by `preloadModules`, looked up synchronously by the commands. */
export function loadedModule(path: string, field: string, base?: string): { key: string; definition: StepperDefinition } {
  if (isEditorModule({ module: path })) {
    throw new SolverError("bad-input", `${field}: "${path}" names a stepper in the sandbox's code panel; on the command line give its module file instead (save the code as a .ts file)`, field);
  }
  const key = userPath(path, base);
  const definition = loaded.get(key);
  if (!definition) throw new SolverError("bad-input", `${field}: stepper module file not found: ${key}`, field);
  return { key, definition };
}

/** Rewrite the `module` of each spec that names one to its loaded key and fill `method` with the definition's name. */
export function resolveSpecModules<T extends Record<string, unknown>>(specs: T[], field: (i: number) => string, base?: string): T[] {
  return specs.map((s, i) => {
    if (typeof s.module !== "string") return s;
    const { key, definition } = loadedModule(s.module, `${field(i)}.module`, base);
    return { ...s, module: key, method: definition.name };
  });
}

function readJson(path: string): unknown {
  try { return JSON.parse(readFileSync(path, "utf8")); } catch { return undefined; }
}

/**
 * Import every stepper module a command line names, before the command runs (imports are asynchronous; the
 * commands then find them synchronously): `--stepper-module FILE`, `"module"` entries of a `--steppers FILE`
 * (relative to that file) and the `"stepper": { "module" }` of a scenario file (relative to it). Files that
 * cannot be read are left for the command to report.
 */
export async function preloadModules(args: ParsedArgs): Promise<void> {
  const mod = args.options.get("stepper-module");
  if (typeof mod === "string") await loadStepperModule(mod, "--stepper-module");
  const steppers = args.options.get("steppers");
  if (typeof steppers === "string") {
    const file = userPath(steppers);
    const raw = readJson(file);
    if (Array.isArray(raw)) {
      for (let i = 0; i < raw.length; i++) {
        const m = (raw[i] as Record<string, unknown> | null)?.module;
        if (typeof m === "string") await loadStepperModule(m, `--steppers[${i}].module`, dirname(file));
      }
    }
  }
  const scenarioArg = args.positional[0];
  if (scenarioArg && !builtinScenario(scenarioArg)) {
    const file = userPath(scenarioArg);
    const raw = readJson(file) as { stepper?: { module?: unknown } } | undefined;
    const m = raw?.stepper?.module;
    if (typeof mod !== "string" && raw?.stepper && isEditorModule(raw.stepper)) {
      throw new SolverError("bad-input", `stepper.module: "${String(m)}" is code from the sandbox's code panel, carried in this file as stepperCode; ` +
        `the command line does not run code from inside a scenario — write it out with \`stepwell unpack ${scenarioArg}\`, read it, then run the file that prints`, "stepper.module");
    }
    if (typeof m === "string" && typeof mod !== "string") await loadStepperModule(m, "stepper.module", dirname(file));
  }
}
