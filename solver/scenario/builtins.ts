/**
 * Built-in scenarios: invented demo setups, plain data in the scenario-file format.
 * Adding a scenario means adding an object here, no code.
 */
export const BUILTIN_SCENARIOS = [
  {
    name: "shelf-gyre-basin",
    description:
      "Main demo: a wind-driven three-layer basin on a beta plane, with a continental shelf along its western coast; " +
      "a cosine wind spins up a single gyre with a western boundary current over the shelf slope.",
    mesh: {
      type: "basin-hex", shape: "polygon", spacing: 20000,
      vertices: [[0, 0], [1200000, 0], [1200000, 880000], [560000, 1000000], [0, 860000]],
    },
    layers: [
      { thickness: 300, density: 1025.0, name: "surface" },
      { thickness: 700, density: 1026.4, name: "thermocline" },
      { thickness: 3000, density: 1027.6, name: "abyss" },
    ],
    physics: {
      gravity: 9.81, f0: 7e-5, beta: 2e-11,
      wind: { type: "zonal-cosine", amplitude: 0.1 },
      bottomDrag: 1e-7, viscosity: 2000,
      topography: { type: "shelf", side: "west", width: 100000, depth: 1500, slopeWidth: 80000 },
    },
    initial: { type: "rest" },
    stepper: { method: "rk4", dt: 100 },
    duration: 10 * 86400,
    outputInterval: 6 * 3600,
  },
  {
    name: "ring-wave",
    description: "A raised free-surface bump on a doubly periodic two-layer ocean radiates a ring of fast surface gravity waves.",
    mesh: { type: "periodic-hex", cellsX: 48, cellsY: 48, spacing: 20000 },
    layers: [{ thickness: 500, density: 1025.0 }, { thickness: 3500, density: 1027.0 }],
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
    initial: { type: "bump", amplitude: 1.0, radius: 80000, interface: 0 },
    stepper: { method: "rk4", dt: 60 },
    duration: 86400,
    outputInterval: 3600,
  },
  {
    name: "front-adjustment",
    description:
      "Geostrophic adjustment: a band of raised thermocline on the f-plane slumps, radiates inertia-gravity waves " +
      "and leaves two balanced jets along its edges.",
    mesh: { type: "periodic-hex", cellsX: 48, cellsY: 40, spacing: 10000 },
    layers: [{ thickness: 500, density: 1025.0 }, { thickness: 3500, density: 1027.0 }],
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
    initial: { type: "step", amplitude: 40, interface: 1, halfWidth: 100000, width: 20000 },
    stepper: { method: "rk4", dt: 50 },
    duration: 2 * 86400,
    outputInterval: 3600,
  },
  {
    name: "steady-eddy",
    description:
      "A discretely balanced baroclinic eddy on the f-plane: in the linear system it does not move at all; " +
      "the nonlinear model lets it drift slowly, so any fast oscillation seen is the stepper's doing.",
    mesh: { type: "periodic-hex", cellsX: 36, cellsY: 36, spacing: 20000 },
    layers: [{ thickness: 500, density: 1025.0 }, { thickness: 3500, density: 1027.0 }],
    physics: { gravity: 9.81, f0: 1e-4, beta: 0 },
    initial: { type: "balanced", amplitude: 30, radius: 80000, interface: 1 },
    stepper: { method: "rk4", dt: 100 },
    duration: 5 * 86400,
    outputInterval: 6 * 3600,
  },
  {
    name: "eddying-jets",
    description:
      "Made for long-run statistics: a doubly periodic two-layer ocean on the f-plane, stirred by a zonal wind that " +
      "alternates four times across the domain. The wind builds fronts whose jets turn baroclinically unstable after " +
      "about two weeks; bottom drag and viscosity balance the wind, and the eddy field is statistically steady from " +
      "about day 20 (1,920 cells).",
    mesh: { type: "periodic-hex", cellsX: 48, cellsY: 40, spacing: 10000 },
    layers: [{ thickness: 200, density: 1025.0, name: "upper" }, { thickness: 300, density: 1028.5, name: "lower" }],
    physics: {
      gravity: 9.81, f0: 1e-4, beta: 0,
      wind: { type: "zonal-cosine", amplitude: 0.3, gyres: 4 },
      bottomDrag: 3e-6, viscosity: 100,
    },
    // a weak meridional band of raised interface breaks the zonal symmetry, so the jets meet a finite disturbance
    initial: { type: "step", amplitude: 15, interface: 1, halfWidth: 120000, width: 20000, axis: "x" },
    stepper: { method: "rk4", dt: 150 },
    duration: 40 * 86400,
    outputInterval: 6 * 3600,
  },
] as const;

export type BuiltinName = (typeof BUILTIN_SCENARIOS)[number]["name"];

export function builtinScenario(name: string): unknown | undefined {
  const s = BUILTIN_SCENARIOS.find((b) => b.name === name);
  return s ? JSON.parse(JSON.stringify(s)) : undefined;
}
