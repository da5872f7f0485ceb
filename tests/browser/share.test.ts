/** Node-side checks of the share-link codec and the drift series the plots draw (no browser needed). */
import { describe, expect, it } from "vitest";
import { decodeSetup, encodeSetup, fnv1a } from "../../app/share";
import { driftSeries, thin } from "../../app/drift";

describe("share links", () => {
  it("FNV-1a matches the published 32-bit test vectors (Fowler/Noll/Vo reference test suite; values quoted from memory)", () => {
    expect(fnv1a("")).toBe("811c9dc5");
    expect(fnv1a("a")).toBe("e40c292c");
    expect(fnv1a("foobar")).toBe("bf9cf968");
  });

  it("round-trips a scenario with non-ASCII text and refuses cut, edited or foreign links", () => {
    const s = { name: "ρ-test", description: "wind 0.1 N/m², Δt = 60 s", layers: [{ thickness: 500, density: 1025 }] };
    const hash = `#${encodeSetup(s)}`;
    expect(hash).toMatch(/^#setup=[A-Za-z0-9_-]+\.[0-9a-f]{8}$/);
    expect(decodeSetup(hash)).toEqual({ kind: "ok", scenario: s });
    expect(decodeSetup("")).toEqual({ kind: "none" });
    expect(decodeSetup(hash.slice(0, hash.length - 12)).kind).toBe("broken");
    const i = hash.indexOf("=") + 5;
    const edited = hash.slice(0, i) + (hash[i] === "B" ? "C" : "B") + hash.slice(i + 1);
    expect(decodeSetup(edited)).toMatchObject({ kind: "broken" });
    expect(decodeSetup("#view=map")).toMatchObject({ kind: "broken", reason: expect.stringContaining("does not hold") });
  });
});

describe("drift series", () => {
  it("is relative to the initial values, or to the largest energy when the run starts at rest", () => {
    const d = driftSeries([
      { time: 0, energy: 10, mass: [100, 200] },
      { time: 86400, energy: 10.5, mass: [100, 201] },
    ]);
    expect(d.days).toEqual([0, 1]);
    expect(d.energy[1]).toBeCloseTo(0.05, 14);
    expect(d.mass[1][1]).toBeCloseTo(0.005, 14);
    expect(d.energyReference).toBe("initial");
    const rest = driftSeries([{ time: 0, energy: 0, mass: [1] }, { time: 10, energy: 4, mass: [1] }, { time: 20, energy: 2, mass: [1] }]);
    expect(rest.energyReference).toBe("largest");
    expect(rest.energy).toEqual([0, 1, 0.5]);
  });

  it("thins a long history to about half, keeping the first and last samples", () => {
    const samples = Array.from({ length: 11 }, (_, j) => ({ time: j, energy: j, mass: [1] }));
    expect(thin(samples, 20)).toBe(samples);
    const t = thin(samples, 10);
    expect(t.map((s) => s.time)).toEqual([0, 2, 4, 6, 8, 10]);
  });
});
