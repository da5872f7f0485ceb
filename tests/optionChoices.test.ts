import { describe, expect, it } from "vitest";
import { createRun } from "../solver/driver/run";
import { createStepper, listMethods } from "../solver/time/registry";
import { optionChoices, type OptionDescription } from "../solver/time/optionChoices";
import { SolverError } from "../solver/errors";

const threeLayers = [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.4 }, { thickness: 3000, density: 1027.6 }];
const run = createRun({
  name: "choices", mesh: { type: "periodic-hex", cellsX: 6, cellsY: 6, spacing: 20000 }, layers: threeLayers,
  physics: { gravity: 9.81, f0: 1e-4, beta: 0 }, initial: { type: "bump", amplitude: 1, radius: 60000, interface: 0 },
  stepper: { method: "rk4", dt: 10 }, duration: 3600,
}, undefined);

function build(spec: Record<string, unknown>) {
  return createStepper(run.problem, { dt: 10, ...spec });
}
const byKey = (os: OptionDescription[]) => new Map(os.map((o) => [o.key, o]));
const values = (o: OptionDescription | undefined) => (o?.choices ?? []).map((c) => c.value);

describe("option choices of the registered methods", () => {
  it("lists every registry option of every method, with help and a known kind", () => {
    for (const m of listMethods()) {
      const os = optionChoices(m.name, 3);
      expect(os.map((o) => o.key)).toEqual(Object.keys(m.options ?? {}));
      for (const o of os) {
        expect(o.help.length).toBeGreaterThan(10);
        expect(["select", "number", "integer", "json"]).toContain(o.kind);
        if (o.kind === "select") expect(o.choices!.some((c) => c.value === o.default)).toBe(true);
      }
    }
  });

  it("exponential methods: linear rest, modes:1…L, jacobian with the family's default; backends from the φ registry", () => {
    const etd = byKey(optionChoices("etdrk4", 3));
    expect(values(etd.get("linear"))).toEqual(["rest", "modes:1", "modes:2", "modes:3", "jacobian"]);
    expect(etd.get("linear")!.default).toBe("rest");
    expect(values(byKey(optionChoices("etdrk4", 1)).get("linear"))).toEqual(["rest", "modes:1", "jacobian"]);
    for (const rb of ["exprb2", "exprb32", "exprb43"]) expect(byKey(optionChoices(rb, 3)).get("linear")!.default).toBe("jacobian");
    const backend = etd.get("backend")!;
    expect(backend.default).toBe("krylov");
    expect(values(backend)).toEqual(expect.arrayContaining(["krylov", "taylor", "chebyshev", "substep", "rational", "dense"]));
    const marked = backend.choices!.filter((c) => c.conflicts?.some((k) => k.key === "linear" && k.values.includes("jacobian"))).map((c) => c.value);
    expect(marked.sort()).toEqual(["chebyshev", "rational", "rational-damped"]);
    expect(etd.get("tolerance")).toMatchObject({ kind: "number", default: 1e-8, min: 0, max: 1, exclusive: true });
    expect(etd.get("substeps")).toMatchObject({ kind: "integer", sameAsOmitted: [0] });
    expect(values(etd.get("filter"))).toEqual(["off", 8, 16]);
  });

  it("split-explicit: filter boxcar | hann, passes 1–4 (default 2), sub-steps automatic when empty or 0", () => {
    const se = byKey(optionChoices("split-explicit", 3));
    expect(values(se.get("filter"))).toEqual(["boxcar", "hann"]);
    expect(se.get("filter")!.default).toBe("boxcar");
    expect(values(se.get("passes"))).toEqual([1, 2, 3, 4]);
    expect(se.get("passes")!.default).toBe(2);
    expect(se.get("substeps")).toMatchObject({ kind: "integer", default: null, sameAsOmitted: [0] });
  });

  it("every offered linear × backend and filter × backend pair builds, except the declared conflicts, which the solver refuses by field", () => {
    const os = byKey(optionChoices("etdrk4", 3));
    for (const lin of os.get("linear")!.choices!) {
      for (const be of os.get("backend")!.choices!) {
        const spec = { method: "etdrk4", linear: lin.value, backend: be.value };
        // the filter is left at its default, "off"
        const clash = (be.conflicts ?? []).some((k) => (k.key === "linear" && k.values.includes(lin.value)) || (k.key === "filter" && k.values.includes("off")));
        if (!clash) {
          expect(() => build(spec), JSON.stringify(spec)).not.toThrow();
          continue;
        }
        try {
          build(spec);
          expect.unreachable(JSON.stringify(spec));
        } catch (e) {
          expect(e).toBeInstanceOf(SolverError);
          expect((e as SolverError).field).toMatch(/^stepper\.(backend|filter)/);
        }
      }
    }
    // with modes:N every filter is refused, as its declared conflict says (the restricted φ keeps v/k! unfiltered)
    const modesConflicts = os.get("linear")!.choices!.find((c) => c.value === "modes:1")!.conflicts ?? [];
    expect(modesConflicts.find((k) => k.key === "filter")?.values).toEqual([8, 16]);
    expect(modesConflicts.find((k) => k.key === "backend")?.values).toEqual(["rational-damped"]);
    expect(() => build({ method: "etdrk4", linear: "modes:1", backend: "chebyshev", filter: 8 })).toThrow(/^stepper\.filter: the filter works with linear rest/);
    expect(() => build({ method: "etdrk4", linear: "modes:2", backend: "rational-damped", filter: { order: 16, cutoff: 1e-3 } })).toThrow(/stepper\.filter: the filter \(and so rational-damped\)/);
    for (const f of os.get("filter")!.choices!) {
      for (const be of os.get("backend")!.choices!) {
        const spec = { method: "etdrk4", linear: "rest", backend: be.value, filter: f.value };
        // a conflict may be declared on either side (the filter choice, or the backend choice)
        const clash = (f.conflicts ?? []).some((k) => k.key === "backend" && k.values.includes(be.value)) ||
          (be.conflicts ?? []).some((k) => k.key === "filter" && k.values.includes(f.value));
        if (clash) expect(() => build(spec)).toThrow(/filter/);
        else expect(() => build(spec), JSON.stringify(spec)).not.toThrow();
      }
    }
    const se = byKey(optionChoices("split-explicit", 3));
    for (const f of se.get("filter")!.choices!) for (const p of se.get("passes")!.choices!) {
      expect(() => build({ method: "split-explicit", filter: f.value, passes: p.value })).not.toThrow();
    }
  });
});
