/**
 * The sandbox's handling of stepper code, in Node: type stripping with sucrase checked against esbuild (a
 * second, independent TypeScript transpiler) on the worked examples, positions mapped back into the user's
 * text, syntax errors located on the line esbuild reports, and code carried by links kept apart from the
 * scenario the solver loads.
 */
import { readFileSync, readdirSync } from "node:fs";
import path from "node:path";
import { transformSync } from "esbuild";
import { describe, expect, it } from "vitest";
import { locateInSource, transpile } from "../app/code/transpile";
import { splitScenarioCode, withCode } from "../app/code/userCode";
import { stepperTemplate } from "../solver/time/template";

const EXAMPLES = path.resolve(__dirname, "../public/steppers");
const importText = (js: string) => import(`data:text/javascript;base64,${Buffer.from(js).toString("base64")}`) as Promise<{ default: { name: string; order: number; description: string; options?: object } }>;

describe("type stripping", () => {
  const files = readdirSync(EXAMPLES).filter((f) => f.endsWith(".ts"));
  it.each([...files, "template"])("%s: same lines, and the same definition as esbuild's output", async (file) => {
    const source = file === "template" ? stepperTemplate("my-stepper", "stepwell/solver/api") : readFileSync(path.join(EXAMPLES, file), "utf8");
    const t = transpile(source, "ts", "x");
    if (!t.ok) throw new Error(t.message);
    expect(t.code.split("\n").length).toBe(source.split("\n").length);
    const ours = (await importText(t.code)).default;
    const theirs = (await importText(transformSync(source, { loader: "ts", format: "esm" }).code)).default;
    expect({ name: ours.name, order: ours.order, description: ours.description, options: Object.keys(ours.options ?? {}) })
      .toEqual({ name: theirs.name, order: theirs.order, description: theirs.description, options: Object.keys(theirs.options ?? {}) });
  });

  it("maps a place in the generated code back to the same token in the user's text", () => {
    const source = ["const a: number = 1;", "function f(x: Float64Array, t: number, dt: number): void { if (t > a) throw new Error(\"late\"); }", "export default f;"].join("\n");
    const t = transpile(source, "ts");
    if (!t.ok) throw new Error(t.message);
    const genLine = t.code.split("\n")[1];
    const genCol = genLine.indexOf("throw") + 1;
    expect(genCol).toBeLessThan(source.split("\n")[1].indexOf("throw") + 1); // the types before it were removed
    const hit = locateInSource(`step threw: late (at blob:http://h/u-1:2:${genCol})`, "blob:http://h/u-1", t);
    expect(hit).toEqual({ text: `step threw: late (at line 2, column ${source.split("\n")[1].indexOf("throw") + 1} of your code)`, line: 2, column: source.split("\n")[1].indexOf("throw") + 1 });
    expect(locateInSource("no place named", "blob:http://h/u-1", t)).toBeNull();
  });

  it("a syntax error is reported on the line esbuild reports", () => {
    const source = "export default {\n  name: \"x\",\n  order: (2,\n};\n";
    const t = transpile(source, "js");
    expect(t.ok).toBe(false);
    let line = 0;
    try { transformSync(source, { loader: "js" }); } catch (e) { line = (e as { errors: { location: { line: number } }[] }).errors[0].location.line; }
    expect(line).toBeGreaterThan(0);
    expect(t.ok ? 0 : t.line).toBe(line);
  });
});

describe("code carried by a scenario", () => {
  const scenario = { name: "s", stepper: { module: "editor:mine", method: "user-module", dt: 30, alpha: 0.6 } };
  const code = { name: "mine", language: "ts" as const, source: "export default {}" };
  it("comes apart from the scenario; the solver gets RK4 at the same Δt until the user consents", () => {
    const split = splitScenarioCode(withCode(scenario, code));
    expect(split.code).toEqual(code);
    expect(split.scenario).toEqual({ name: "s", stepper: { method: "rk4", dt: 30 } });
    expect(split.spec).toEqual(scenario.stepper);
  });
  it("a scenario without code, or with a built-in stepper, passes unchanged", () => {
    const plain = { name: "p", stepper: { method: "rk4", dt: 10 } };
    expect(splitScenarioCode(plain)).toEqual({ scenario: plain, code: null, spec: null });
    expect(splitScenarioCode(withCode(plain, code)).scenario).toEqual(plain);
    expect(splitScenarioCode({ ...plain, stepperCode: { source: 5 } }).code).toBeNull();
  });
});
