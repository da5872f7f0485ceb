/**
 * Stepper code carried inside a scenario file: the sandbox's code panel exports a scenario whose stepper is
 * `{ "module": "editor:<name>" }` with the source under the top-level key `stepperCode`. The page loads it (after
 * the user agrees); the command line never runs it from there, but `stepwell unpack` writes it out as a module file
 * beside a scenario that names that file. One definition of the key, the prefix and the checks for both.
 */
export type CodeLanguage = "ts" | "js";

export interface StepperCode {
  /** The stepper's name as the editor last saw it. */
  name: string;
  language: CodeLanguage;
  source: string;
}

/** Longest source text accepted (from a link, a file or the editor) [characters]. */
export const MAX_SOURCE_CHARS = 200_000;

/** Module keys of editor code: "editor:<name>" (never a path, so it cannot be mistaken for a file). */
export const EDITOR_MODULE_PREFIX = "editor:";
export const moduleKey = (name: string) => `${EDITOR_MODULE_PREFIX}${name}`;
export const isEditorModule = (spec: { module?: unknown } | undefined): boolean =>
  typeof spec?.module === "string" && spec.module.startsWith(EDITOR_MODULE_PREFIX);

/** The `name: "…"` a module declares, read from its text (without running it). */
export function declaredName(source: string): string | null {
  const m = /\bname\s*:\s*["'`]([a-z0-9-]+)["'`]/.exec(source);
  return m ? m[1] : null;
}

/** A `stepperCode` value → the code, or null when it is not one (no source, or a source over MAX_SOURCE_CHARS). */
export function asStepperCode(v: unknown): StepperCode | null {
  if (!v || typeof v !== "object") return null;
  const c = v as Partial<StepperCode>;
  if (typeof c.source !== "string" || c.source.length > MAX_SOURCE_CHARS) return null;
  const language: CodeLanguage = c.language === "js" ? "js" : "ts";
  const name = typeof c.name === "string" && /^[a-z0-9][a-z0-9-]*$/.test(c.name) ? c.name : declaredName(c.source) ?? "my-stepper";
  return { name, language, source: c.source };
}
