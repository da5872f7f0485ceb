import { z } from "zod";
import { SolverError } from "../errors.js";
import { basinLattice, describeSize, hexCellArea, polygonProblem, shapeArea, stretchPolygon, type BasinShape } from "../mesh/hexLattice.js";
import { estimateRunBytes, formatBytes, formatCount, LIMITS, raiseHint, runLengthProblem, type Limits } from "./limits.js";

/**
 * The scenario file: one JSON object describing a whole run, in SI units.
 * Validated here with messages that name the offending field.
 */

const positive = (what: string) => z.number({ error: `${what} must be a number` }).finite().positive({ error: `${what} must be > 0` });
const finite = (what: string) => z.number({ error: `${what} must be a number` }).finite();
const nonNegative = (what: string) => finite(what).min(0, { error: `${what} must be ≥ 0` });

/** Cells along one side of a periodic mesh; the upper bound is checked with the memory in `meshSizeProblem`. */
const cellCount = () => z.number({ error: "must be a number" }).int({ error: "must be a whole number of cells" }).min(4, { error: "must be ≥ 4" });

const periodicMeshFor = () => z.object({
  type: z.literal("periodic-hex"),
  cellsX: cellCount(),
  cellsY: cellCount()
    .refine((n) => n % 2 === 0, { error: "must be even (rows of the hexagonal lattice pair up across the periodic boundary)" }),
  spacing: positive("spacing [m]"),
  jitter: z.number().min(0).max(0.1, { error: "must lie in [0, 0.1] (fraction of the spacing)" }).optional(),
  seed: z.number().int().optional(),
}).strict();

const basinMeshFor = (limits: Limits) => z.object({
  type: z.literal("basin-hex"),
  shape: z.enum(["rectangle", "ellipse", "polygon"], { error: 'must be "rectangle", "ellipse" or "polygon"' }),
  /** Rectangle, ellipse: the size [m]. Polygon: optional, stretches the vertices' bounding box to this size. */
  width: positive("width [m]").optional(),
  height: positive("height [m]").optional(),
  vertices: z.array(z.tuple([finite("x [m]"), finite("y [m]")]))
    .min(3, { error: "a polygon needs at least 3 vertices" })
    .max(limits.polygonVertices, { error: `has more than the limit of ${limits.polygonVertices} vertices` }).optional(),
  spacing: positive("spacing [m]"),
}).strict().superRefine((m, ctx) => {
  if (m.shape === "polygon") {
    if (!m.vertices) { ctx.addIssue({ code: "custom", path: ["vertices"], message: "is required for a polygon basin: [[x, y], …] in metres" }); return; }
    const bad = polygonProblem(m.vertices);
    if (bad) ctx.addIssue({ code: "custom", path: bad.index === null ? ["vertices"] : ["vertices", bad.index], message: bad.message });
  } else {
    if (m.width === undefined) ctx.addIssue({ code: "custom", path: ["width"], message: `is required for a ${m.shape} basin [m]` });
    if (m.height === undefined) ctx.addIssue({ code: "custom", path: ["height"], message: `is required for a ${m.shape} basin [m]` });
    if (m.vertices !== undefined) ctx.addIssue({ code: "custom", path: ["vertices"], message: `belongs to a polygon basin; a ${m.shape} basin takes width and height` });
  }
});

const layer = z.object({
  thickness: positive("thickness [m]"),
  density: positive("density [kg/m³]"),
  name: z.string().optional(),
}).strict();

const wind = z.discriminatedUnion("type", [
  z.object({
    type: z.literal("zonal-cosine"),
    /** Peak eastward stress τ0 [N/m²]; τx = −τ0 cos(π·gyres·(y − y_south)/L_y). */
    amplitude: finite("amplitude [N/m²]"),
    gyres: z.number().int().min(1).optional(),
  }).strict(),
  z.object({ type: z.literal("uniform"), x: finite("x [N/m²]"), y: finite("y [N/m²]") }).strict(),
]);

const topography = z.discriminatedUnion("type", [
  z.object({ type: z.literal("flat") }).strict(),
  z.object({
    type: z.literal("shelf"),
    side: z.enum(["west", "east", "south", "north"]),
    /** Width of the flat shelf next to the coast [m]. */
    width: positive("width [m]"),
    /** Total water depth on the shelf [m]. */
    depth: positive("depth [m]"),
    /** Width of the slope between shelf and deep basin [m]. */
    slopeWidth: positive("slopeWidth [m]").optional(),
  }).strict(),
  z.object({
    type: z.literal("seamount"),
    height: positive("height [m]"),
    radius: positive("radius [m]"),
    x: finite("x [m]").optional(),
    y: finite("y [m]").optional(),
  }).strict(),
]);

const physics = z.object({
  gravity: positive("gravity [m/s²]").default(9.81),
  f0: finite("f0 [1/s]").default(0),
  beta: finite("beta [1/(m s)]").default(0),
  wind: wind.optional(),
  bottomDrag: nonNegative("bottomDrag [1/s]").optional(),
  viscosity: nonNegative("viscosity [m²/s]").optional(),
  biharmonic: nonNegative("biharmonic [m⁴/s]").optional(),
  topography: topography.optional(),
}).strict();

const interfaceIndex = z.number().int({ error: "must be a whole number" }).min(0, { error: "must be ≥ 0 (0 = free surface)" });

/** A Gaussian displacement amplitude·exp(−r²/radius²) of interface k (0 = free surface), centred unless x, y are given. */
const gaussianFields = {
  amplitude: finite("amplitude [m]"),
  radius: positive("radius [m]"),
  interface: interfaceIndex.default(0),
  x: finite("x [m]").optional(),
  y: finite("y [m]").optional(),
};

const initial = z.discriminatedUnion("type", [
  z.object({ type: z.literal("rest") }).strict(),
  z.object({ type: z.literal("bump"), ...gaussianFields }).strict(),
  z.object({
    type: z.literal("step"),
    /** Displacement of the interface on the raised side [m]. */
    amplitude: finite("amplitude [m]"),
    interface: interfaceIndex.default(0),
    /** Half-width of the raised band, centred in the domain [m]. */
    halfWidth: positive("halfWidth [m]"),
    /** Width of the smooth tanh transition [m]. */
    width: positive("width [m]").optional(),
    axis: z.enum(["x", "y"]).optional(),
  }).strict(),
  /** A Gaussian interface displacement with the flow in discrete balance with it. */
  z.object({ type: z.literal("balanced"), ...gaussianFields }).strict(),
]);

export const stepperSchema = z.object({
  method: z.string({ error: "must be a method name" }).min(1).optional(),
  /** A user stepper module (path, relative to the file that names it); its definition replaces `method`. */
  module: z.string({ error: "must be a path to a stepper module (.js, .mjs or .ts)" }).min(1).optional(),
  dt: positive("dt [s]"),
  label: z.string().optional(),
}).passthrough().superRefine((s, ctx) => {
  if (s.method === undefined && s.module === undefined) ctx.addIssue({ code: "custom", path: ["method"], message: "is required: a method name (or give \"module\": a stepper module file)" });
}).transform((s) => ({ ...s, method: s.method ?? "user-module" }));

/** What a scenario is checked against besides its own fields. */
export interface ScenarioCheck {
  /** Bounds on work and memory (default LIMITS). */
  readonly limits?: Limits;
  /**
   * Check the run length duration ÷ stepper.dt (default true). Commands that run with another Δt or duration
   * (CLI --dt, --steps, --duration; studies) check what they will actually run instead.
   */
  readonly runLength?: boolean;
}

type MeshSpecOf = z.infer<ReturnType<typeof periodicMeshFor>> | z.infer<ReturnType<typeof basinMeshFor>>;

/** The basin shape of a basin mesh spec, polygons stretched to width × height when given. */
export function basinShapeOf(m: Extract<MeshSpecOf, { type: "basin-hex" }>): BasinShape {
  if (m.shape === "polygon") return { shape: "polygon", vertices: stretchPolygon(m.vertices!, m.width, m.height) };
  return { shape: m.shape, width: m.width!, height: m.height! };
}

/**
 * The size of the mesh a spec describes — cells along each side, cells, estimated memory — against the limits,
 * computed from the spec alone (nothing is allocated). Returns the offending field and a message, or null.
 */
export function meshSizeProblem(m: MeshSpecOf, nLayers: number, limits: Limits): { path: (string | number)[]; message: string } | null {
  let cells: number;
  let cellsPath: (string | number)[];
  let what: string;
  // zod runs this refinement even when a field failed its own check; those are reported on their own
  const ok = (v: unknown) => typeof v === "number" && v > 0 && Number.isFinite(v);
  if (!ok(m.spacing)) return null;
  if (m.type === "periodic-hex") {
    if (!(Number.isInteger(m.cellsX) && Number.isInteger(m.cellsY) && m.cellsX >= 4 && m.cellsY >= 4)) return null;
    const side = m.cellsX >= m.cellsY ? "cellsX" : "cellsY";
    if (m[side] > limits.cellsPerSide) {
      return { path: [side], message: `is ${m[side]} cells along a side, more than the limit of ${limits.cellsPerSide}; the ${m.cellsX} × ${m.cellsY} mesh would need about ` +
        `${formatBytes(estimateRunBytes(m.cellsX * m.cellsY, nLayers))} of memory` };
    }
  }
  if (m.type === "basin-hex") {
    if (m.shape === "polygon" ? !m.vertices || polygonProblem(m.vertices) !== null : !ok(m.width) || !ok(m.height)) return null;
    if ((m.width !== undefined && !ok(m.width)) || (m.height !== undefined && !ok(m.height))) return null;
  }
  if (m.type === "periodic-hex") {
    cells = m.cellsX * m.cellsY;
    cellsPath = ["cellsX"];
    what = ` × mesh.cellsY = ${m.cellsX} × ${m.cellsY} = ${formatCount(cells)} cells`;
  } else {
    const shape = basinShapeOf(m);
    const lat = basinLattice(shape, m.spacing);
    const side = Math.max(lat.across, lat.along);
    if (!(side <= limits.cellsPerSide)) {
      // blame the size when no ocean is that large (wider than the Earth's circumference, 40 075 km), else the spacing
      const extent = Math.max(lat.across * m.spacing, lat.along * m.spacing * Math.sqrt(3) / 2);
      const memory = `; about ${formatCount(shapeArea(shape) / hexCellArea(m.spacing))} cells would need about ${formatBytes(estimateRunBytes(shapeArea(shape) / hexCellArea(m.spacing), nLayers))} of memory`;
      if (extent > EARTH_CIRCUMFERENCE) {
        const sizePath = m.shape === "polygon" && m.width === undefined && m.height === undefined ? ["vertices"] : lat.across >= lat.along ? ["width"] : ["height"];
        return { path: sizePath, message: `makes a basin of ${describeSize(shape)}, wider than the Earth's circumference; it would be ${formatCount(Math.ceil(side))} cells ` +
          `across at mesh.spacing ${m.spacing} m, more than the limit of ${limits.cellsPerSide} cells along a side${memory}` };
      }
      return { path: ["spacing"], message: `is ${m.spacing} m: a basin of ${describeSize(shape)} would be ${formatCount(Math.ceil(side))} cells across, ` +
        `more than the limit of ${limits.cellsPerSide} cells along a side${memory}` };
    }
    if (!(lat.nx * lat.ny <= limits.latticePoints)) {
      return { path: ["spacing"], message: `is ${m.spacing} m: the ${lat.nx} × ${lat.ny} lattice around the basin is more than the limit of ${formatCount(limits.latticePoints)} points` };
    }
    const area = shapeArea(shape);
    const cellArea = hexCellArea(m.spacing);
    if (area < cellArea) {
      return { path: ["spacing"], message: `is ${m.spacing} m, but a basin of ${describeSize(shape)} cannot hold one cell of ${Number((cellArea / 1e6).toPrecision(3))} km² at that spacing; ` +
        "make the spacing smaller or the basin larger" };
    }
    cells = Math.ceil(area / cellArea);
    cellsPath = ["spacing"];
    what = ` is ${m.spacing} m: over a basin of ${describeSize(shape)} that makes about ${formatCount(cells)} cells`;
  }
  const bytes = estimateRunBytes(cells, nLayers);
  if (!(cells <= limits.cells)) {
    return { path: cellsPath, message: `${what}, more than the limit of ${formatCount(limits.cells)} cells${raiseHint("cells")}; a run would need about ${formatBytes(bytes)} of memory` };
  }
  if (!(bytes <= limits.memoryBytes)) {
    return { path: cellsPath, message: `${what}; with ${nLayers} layer${nLayers === 1 ? "" : "s"} a run would need about ${formatBytes(bytes)} of memory, more than the limit of ` +
      `${formatBytes(limits.memoryBytes)}${raiseHint("memoryBytes")}` };
  }
  return null;
}

/** Equatorial circumference of the Earth [m] (WGS 84: 2π × 6 378 137 m). */
const EARTH_CIRCUMFERENCE = 2 * Math.PI * 6378137;

function scenarioSchemaWith(limits: Limits, runLength: boolean) {
  return z.object({
    name: z.string({ error: "must be a string" }).min(1, { error: "must not be empty" }),
    description: z.string().optional(),
    mesh: z.discriminatedUnion("type", [periodicMeshFor(), basinMeshFor(limits)], { error: 'mesh.type must be "periodic-hex" or "basin-hex"' }),
    layers: z.array(layer).min(1, { error: "needs at least one layer" }).max(limits.layers, { error: `at most ${limits.layers} layers` }),
    physics,
    initial,
    stepper: stepperSchema,
    duration: positive("duration [s]"),
    outputInterval: positive("outputInterval [s]").optional(),
  }).strict().superRefine((s, ctx) => {
    for (let k = 1; k < s.layers.length; k++) {
      if (!(s.layers[k].density > s.layers[k - 1].density)) {
        ctx.addIssue({
          code: "custom", path: ["layers", k, "density"],
          message: `must be greater than layers[${k - 1}].density (${s.layers[k - 1].density} kg/m³): densities must increase downward for a stable stack`,
        });
      }
    }
    const idx = "interface" in s.initial ? s.initial.interface : 0;
    if (idx > s.layers.length - 1) {
      ctx.addIssue({ code: "custom", path: ["initial", "interface"], message: `must be ≤ ${s.layers.length - 1} (there are ${s.layers.length} layers; 0 = free surface)` });
    }
    const topo = s.physics.topography;
    if (topo && topo.type !== "flat") {
      const upper = s.layers.slice(0, -1).reduce((a, l) => a + l.thickness, 0);
      const total = upper + s.layers[s.layers.length - 1].thickness;
      const shallowest = topo.type === "shelf" ? topo.depth : total - topo.height;
      if (!(shallowest > upper)) {
        ctx.addIssue({
          code: "custom", path: ["physics", "topography", topo.type === "shelf" ? "depth" : "height"],
          message: `leaves ${shallowest.toFixed(1)} m of water, but the layers above the bottom layer are ${upper} m thick: the bottom layer would vanish`,
        });
      }
    }
    const size = meshSizeProblem(s.mesh, s.layers.length, limits);
    if (size) ctx.addIssue({ code: "custom", path: ["mesh", ...size.path], message: size.message });
    if (runLength) {
      const long = runLengthProblem(s.duration, s.stepper.dt, limits, "duration", "stepper.dt");
      if (long) ctx.addIssue({ code: "custom", path: long.field === "duration" ? ["duration"] : ["stepper", "dt"], message: long.message });
    }
    if (s.outputInterval !== undefined && s.duration <= limits.duration && !(s.duration / s.outputInterval <= limits.outputTimes)) {
      ctx.addIssue({
        code: "custom", path: ["outputInterval"],
        message: `is ${s.outputInterval} s: ${formatCount(Math.ceil(s.duration / s.outputInterval))} output times over the duration, more than the limit of ${formatCount(limits.outputTimes)}`,
      });
    }
  });
}

const schemaCache = new Map<string, ReturnType<typeof scenarioSchemaWith>>();

/** The scenario schema with the given bounds (built once per distinct set of bounds). */
export function scenarioSchemaFor(limits: Limits = LIMITS, runLength = true): ReturnType<typeof scenarioSchemaWith> {
  const key = JSON.stringify(limits) + runLength;
  let schema = schemaCache.get(key);
  if (!schema) {
    schema = scenarioSchemaWith(limits, runLength);
    schemaCache.set(key, schema);
  }
  return schema;
}

export const scenarioSchema = scenarioSchemaFor(LIMITS, true);

export type Scenario = z.infer<typeof scenarioSchema>;
export type StepperSpec = z.infer<typeof stepperSchema>;
export type InitialSpec = Scenario["initial"];
export type MeshSpec = Scenario["mesh"];

/** "layers.1.density" → "layers[1].density". */
export function fieldPath(path: readonly PropertyKey[]): string {
  let s = "";
  for (const p of path) s += typeof p === "number" ? `[${p}]` : s ? `.${String(p)}` : String(p);
  return s || "(scenario)";
}

/** Validate an unknown value as a scenario; throws one SolverError naming the first offending field. */
export function parseScenario(raw: unknown, prefix = "", check: ScenarioCheck = {}): Scenario {
  const r = scenarioSchemaFor(check.limits ?? LIMITS, check.runLength ?? true).safeParse(raw);
  if (r.success) return r.data;
  const issues = r.error.issues.map((i) => {
    let field = prefix + fieldPath(i.path);
    let msg = i.message;
    if (i.code === "unrecognized_keys") {
      // name the unknown field itself: "physics.colour: unknown field"
      field = prefix + fieldPath([...i.path, i.keys[0]]);
      msg = `: unknown field${i.keys.length > 1 ? ` (also ${i.keys.slice(1).map((k) => `"${k}"`).join(", ")})` : ""}`;
    }
    if (i.code === "invalid_type" && /received undefined/i.test(msg)) msg = "is required";
    // "mesh.width width [m] must be > 0" → "mesh.width [m] must be > 0"
    const last = i.path[i.path.length - 1];
    if (typeof last === "string" && msg.startsWith(last + " ")) msg = msg.slice(last.length + 1);
    return { field, msg };
  });
  const first = issues[0];
  const more = issues.length > 1 ? ` (and ${issues.length - 1} more problem${issues.length > 2 ? "s" : ""}: ${issues.slice(1, 4).map((i) => i.field).join(", ")})` : "";
  const sep = /^[–: ]/.test(first.msg) ? "" : " ";
  throw new SolverError("bad-input", `${first.field}${sep}${first.msg}${more}`, first.field);
}

/** Parse JSON text and validate it; JSON syntax errors are reported with their position. */
export function parseScenarioText(text: string, source = "scenario", check: ScenarioCheck = {}): Scenario {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new SolverError("bad-input", `${source}: not valid JSON (${(e as Error).message})`, "(file)");
  }
  return parseScenario(raw, "", check);
}
