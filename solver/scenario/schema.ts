import { z } from "zod";
import { SolverError } from "../errors.js";

/**
 * The scenario file: one JSON object describing a whole run, in SI units.
 * Validated here with messages that name the offending field.
 */

const positive = (what: string) => z.number({ error: `${what} must be a number` }).finite().positive({ error: `${what} must be > 0` });
const finite = (what: string) => z.number({ error: `${what} must be a number` }).finite();
const nonNegative = (what: string) => finite(what).min(0, { error: `${what} must be ≥ 0` });

const periodicMesh = z.object({
  type: z.literal("periodic-hex"),
  cellsX: z.number().int({ error: "must be a whole number of cells" }).min(4, { error: "must be ≥ 4" }),
  cellsY: z.number().int({ error: "must be a whole number of cells" }).min(4, { error: "must be ≥ 4" })
    .refine((n) => n % 2 === 0, { error: "must be even (rows of the hexagonal lattice pair up across the periodic boundary)" }),
  spacing: positive("spacing [m]"),
  jitter: z.number().min(0).max(0.1, { error: "must lie in [0, 0.1] (fraction of the spacing)" }).optional(),
  seed: z.number().int().optional(),
}).strict();

const basinMesh = z.object({
  type: z.literal("basin-hex"),
  shape: z.enum(["rectangle", "ellipse", "polygon"], { error: 'must be "rectangle", "ellipse" or "polygon"' }),
  width: positive("width [m]").optional(),
  height: positive("height [m]").optional(),
  vertices: z.array(z.tuple([finite("x [m]"), finite("y [m]")])).min(3, { error: "a polygon needs at least 3 vertices" }).optional(),
  spacing: positive("spacing [m]"),
}).strict().superRefine((m, ctx) => {
  if (m.shape === "polygon") {
    if (!m.vertices) ctx.addIssue({ code: "custom", path: ["vertices"], message: "is required for a polygon basin: [[x, y], …] in metres" });
  } else {
    if (m.width === undefined) ctx.addIssue({ code: "custom", path: ["width"], message: `is required for a ${m.shape} basin [m]` });
    if (m.height === undefined) ctx.addIssue({ code: "custom", path: ["height"], message: `is required for a ${m.shape} basin [m]` });
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
}).transform((s) => ({ ...s, method: s.method ?? "" }));

export const scenarioSchema = z.object({
  name: z.string({ error: "must be a string" }).min(1, { error: "must not be empty" }),
  description: z.string().optional(),
  mesh: z.discriminatedUnion("type", [periodicMesh, basinMesh], { error: 'mesh.type must be "periodic-hex" or "basin-hex"' }),
  layers: z.array(layer).min(1, { error: "needs at least one layer" }).max(12, { error: "at most 12 layers" }),
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
});

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
export function parseScenario(raw: unknown, prefix = ""): Scenario {
  const r = scenarioSchema.safeParse(raw);
  if (r.success) return r.data;
  const issues = r.error.issues.map((i) => {
    const field = prefix + fieldPath(i.path);
    let msg = i.message;
    if (i.code === "unrecognized_keys") msg = `unknown field(s) ${i.keys.map((k) => `"${k}"`).join(", ")}`;
    if (i.code === "invalid_type" && /received undefined/i.test(msg)) msg = "is required";
    return { field, msg };
  });
  const first = issues[0];
  const more = issues.length > 1 ? ` (and ${issues.length - 1} more problem${issues.length > 2 ? "s" : ""}: ${issues.slice(1, 4).map((i) => i.field).join(", ")})` : "";
  throw new SolverError("bad-input", `${first.field} ${first.msg}${more}`, first.field);
}

/** Parse JSON text and validate it; JSON syntax errors are reported with their position. */
export function parseScenarioText(text: string, source = "scenario"): Scenario {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new SolverError("bad-input", `${source}: not valid JSON (${(e as Error).message})`, "(file)");
  }
  return parseScenario(raw);
}
