/**
 * The editor's stepper code → JavaScript the worker can import. TypeScript types are stripped by sucrase
 * (which keeps every line where it was); its token-level source map, read with @jridgewell/trace-mapping,
 * takes a line:column of the generated code back to the user's text. Positions are 1-based lines and columns.
 */
import { transform } from "sucrase";
import { GREATEST_LOWER_BOUND, originalPositionFor, TraceMap } from "@jridgewell/trace-mapping";

export type { CodeLanguage } from "../../solver/scenario/stepperCode.js";
import type { CodeLanguage } from "../../solver/scenario/stepperCode.js";

export interface Transpiled {
  ok: true;
  code: string;
  /** Generated line:column (1-based) → the user's line:column. */
  toSource(line: number, column: number): { line: number; column: number };
}

export interface TranspileError {
  ok: false;
  message: string;
  line: number;
  column: number;
}

/** Strip types (TypeScript) or check the syntax (JavaScript); never runs the code. */
export function transpile(source: string, language: CodeLanguage, fileName = "stepper"): Transpiled | TranspileError {
  try {
    const out = transform(source, {
      transforms: language === "ts" ? ["typescript"] : [],
      disableESTransforms: true,
      sourceMapOptions: { compiledFilename: `${fileName}.js` },
      filePath: `${fileName}.${language}`,
    });
    const map = out.sourceMap ? new TraceMap(out.sourceMap as unknown as ConstructorParameters<typeof TraceMap>[0]) : null;
    return {
      ok: true,
      code: out.code,
      toSource(line, column) {
        if (!map) return { line, column };
        const p = originalPositionFor(map, { line, column: Math.max(0, column - 1), bias: GREATEST_LOWER_BOUND });
        return p.line === null ? { line, column } : { line: p.line, column: (p.column ?? 0) + 1 };
      },
    };
  } catch (e) {
    const err = e as { message?: string; loc?: { line: number; column: number } };
    const msg = String(err.message ?? e).replace(/^Error transforming [^:]*: /, "").replace(/\s*\(\d+:\d+\)\s*$/, "");
    const loc = err.loc ?? parseLoc(String(err.message ?? ""));
    return { ok: false, message: msg, line: loc?.line ?? 1, column: loc?.column ?? 1 };
  }
}

function parseLoc(message: string): { line: number; column: number } | undefined {
  const m = /\((\d+):(\d+)\)\s*$/.exec(message);
  return m ? { line: Number(m[1]), column: Number(m[2]) } : undefined;
}

/**
 * A solver message that locates a fault in a Blob-URL module ("… (at blob:…:12:9)") with the place in the user's
 * text instead; null when the message names no place in `origin`.
 */
export function locateInSource(message: string, origin: string, t: Pick<Transpiled, "toSource">): { text: string; line: number; column: number } | null {
  const i = message.indexOf(origin);
  if (i < 0) return null;
  const m = /^:(\d+):(\d+)/.exec(message.slice(i + origin.length));
  if (!m) return null;
  const p = t.toSource(Number(m[1]), Number(m[2]));
  const text = message.slice(0, i) + `line ${p.line}, column ${p.column} of your code` + message.slice(i + origin.length + m[0].length);
  return { text, line: p.line, column: p.column };
}
