import { describe, expect, it } from "vitest";
import { main } from "../solver/cli/main";
import { count } from "../solver/cli/io";

describe("counts read right (English grammar; common practice, no source)", () => {
  it("one step, one day; several steps, half a day", () => {
    expect(count(1, "step")).toBe("1 step");
    expect(count(3, "step")).toBe("3 steps");
    expect(count(1, "day")).toBe("1 day");
    expect(count(0.5, "day")).toBe("0.5 days");
    expect(count(0, "output time")).toBe("0 output times");
  });
  it("run prints '1 step = 1 day' and no doubled word", async () => {
    let out = "";
    const code = await main(["run", "ring-wave", "--steps", "1", "--dt", "86400", "--quiet"], (s) => { out += s + "\n"; }, () => {});
    expect(code).toBe(0);
    expect(out).toMatch(/1 step = 1 day\b/);
    expect(out).not.toMatch(/\b(\w+) \1\b/);
  });
});
