import { afterAll, describe, expect, it } from "vitest";
import { spawn } from "node:child_process";
import { existsSync, mkdtempSync, openSync, readFileSync, readSync, closeSync, rmSync, statSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { NetCDFReader } from "netcdfjs";
import { main } from "../solver/cli/main";
import { createRun } from "../solver/driver/run";
import { encodeFile, encodeHeader, ncInt, parseHeader, planFile, decodeValues, dataRange, RecordBuffer, recordOffset, type NcSchema } from "../solver/io/netcdf";
import { RunFileWriter } from "../solver/io/runOutput";
import { cellReconstruction, reconstructCellVelocity } from "../solver/mesh/reconstruct";
import { periodicHexMesh, basinHexMesh } from "../solver/mesh/hexLattice";

/**
 * NetCDF output, read back with netcdfjs 4.0.0 (a general-purpose NetCDF-3 reader from the npm registry,
 * independent of our writer) and checked against the NetCDF classic / 64-bit offset format, the UGRID 1.0
 * conventions and the CF 1.8 conventions.
 */

async function cli(...argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = "";
  let err = "";
  const code = await main(argv, (s) => { out += s + "\n"; }, (s) => { err += s + "\n"; });
  return { code, out, err };
}

const dir = mkdtempSync(join(tmpdir(), "stepwell-nc-"));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const pkgVersion = (JSON.parse(readFileSync(new URL("../package.json", import.meta.url), "utf8")) as { version: string }).version;

export const smallPeriodic = {
  name: "small-periodic",
  mesh: { type: "periodic-hex", cellsX: 8, cellsY: 8, spacing: 20000, jitter: 0.05, seed: 3 },
  layers: [{ thickness: 500, density: 1025 }, { thickness: 1500, density: 1027 }],
  physics: { gravity: 9.81, f0: 1e-4, beta: 0, wind: { type: "uniform", x: 0.05, y: 0.02 }, bottomDrag: 1e-6, viscosity: 500 },
  initial: { type: "bump", amplitude: 1, radius: 40000 },
  stepper: { method: "rk4", dt: 60 },
  duration: 1200,
  outputInterval: 300,
};

const smallBasin = {
  name: "small-basin",
  mesh: { type: "basin-hex", shape: "ellipse", width: 200000, height: 160000, spacing: 20000 },
  layers: [{ thickness: 300, density: 1025 }, { thickness: 700, density: 1026.4 }, { thickness: 2000, density: 1027.6 }],
  physics: { gravity: 9.81, f0: 7e-5, beta: 2e-11, wind: { type: "zonal-cosine", amplitude: 0.1 }, topography: { type: "shelf", side: "west", width: 40000, depth: 1500 } },
  initial: { type: "bump", amplitude: 0.5, radius: 40000, interface: 1 },
  stepper: { method: "rk4", dt: 100 },
  duration: 2000,
  outputInterval: 500,
};

function writeScenario(name: string, s: unknown): string {
  const f = join(dir, `${name}.json`);
  writeFileSync(f, JSON.stringify(s));
  return f;
}

// netcdfjs types a variable's attributes as an empty tuple; they are { name, type, value } objects
const attr = (r: NetCDFReader, v: string, a: string) =>
  (r.variables.find((x) => x.name === v)?.attributes as { name: string; value: unknown }[] | undefined)?.find((x) => x.name === a)?.value;
const num = (r: NetCDFReader, v: string) => (r.getDataVariable(v) as number[]).flat() as number[];

describe("NetCDF-3 64-bit offset writer", () => {
  it("writes what netcdfjs reads back: dimensions, typed attributes, fixed and record variables", () => {
    const schema: NcSchema = {
      dimensions: [{ name: "t", length: "unlimited" }, { name: "x", length: 3 }, { name: "y", length: 2 }, { name: "len", length: 5 }],
      attributes: { title: "a test", count: ncInt([1, -2]), scale: 2.5 },
      variables: [
        { name: "grid", type: "double", dimensions: ["y", "x"], attributes: { units: "m", _FillValue: -1e30 } },
        { name: "ids", type: "int", dimensions: ["x"], attributes: { start_index: ncInt(0) } },
        { name: "small", type: "short", dimensions: ["x"] },
        { name: "flags", type: "byte", dimensions: ["x"] },
        { name: "label", type: "char", dimensions: ["len"] },
        { name: "single", type: "float", dimensions: ["y"] },
        { name: "time", type: "double", dimensions: ["t"], attributes: { units: "seconds since 2000-01-01 00:00:00" } },
        { name: "field", type: "double", dimensions: ["t", "x"] },
        { name: "count", type: "int", dimensions: ["t", "y"] },
      ],
    };
    const layout = planFile(schema);
    const bytes = encodeFile(layout, {
      grid: [1, 2, 3, 4, 5, 6], ids: [7, 8, 9], small: [-3, 0, 3], flags: [1, -1, 0], label: "abc", single: [0.5, -0.25],
    }, [0, 1, 2].map((i) => ({ time: [i * 60], field: [i, i + 0.1, i + 0.2], count: [i, -2 * i] })));
    const r = new NetCDFReader(bytes);
    expect(r.version).toBe("64-bit offset format");
    expect(r.dimensions).toEqual([{ name: "t", size: 0 }, { name: "x", size: 3 }, { name: "y", size: 2 }, { name: "len", size: 5 }]);
    expect(r.recordDimension.length).toBe(3);
    expect(r.getAttribute("title")).toBe("a test");
    expect(r.getAttribute("count")).toEqual([1, -2]);
    expect(r.getAttribute("scale")).toBe(2.5);
    expect(r.globalAttributes.find((a) => a.name === "count")?.type).toBe("int");
    expect(num(r, "grid")).toEqual([1, 2, 3, 4, 5, 6]);
    expect(attr(r, "grid", "_FillValue")).toBe(-1e30);
    expect(num(r, "ids")).toEqual([7, 8, 9]);
    // netcdfjs reads vsize / (bytes per value) values of a fixed variable, so the padding shows as a trailing 0
    expect(num(r, "small").slice(0, 3)).toEqual([-3, 0, 3]);
    // …and NC_BYTE (signed in the format) as unsigned bytes
    expect(num(r, "flags").slice(0, 3).map((b) => (b << 24) >> 24)).toEqual([1, -1, 0]);
    expect(r.getDataVariableAsString("label")).toBe("abc");
    expect(num(r, "single")).toEqual([0.5, -0.25]);
    expect(num(r, "time")).toEqual([0, 60, 120]);
    expect(r.getDataVariable("field")).toEqual([[0, 0.1, 0.2], [1, 1.1, 1.2], [2, 2.1, 2.2]]);
    expect(r.getDataVariable("count")).toEqual([[0, 0], [1, -2], [2, -4]]);
    // our own reader agrees
    const h = parseHeader(bytes);
    expect(h.version).toBe(2);
    expect(h.numrecs).toBe(3);
    expect(h.headerSize).toBe(layout.headerSize);
    expect(h.recordSize).toBe(layout.recordSize);
    const f = h.variables.get("field")!;
    const rr = dataRange(h, f, 2);
    expect(Array.from(decodeValues("double", bytes, rr.offset, 3) as Float64Array)).toEqual([2, 2.1, 2.2]);
    // NetCDF classic format: fixed data follows the header, each variable padded to 4 bytes, then the records
    // (sizes: 48 + 12 + 8 (6 bytes of short, padded) + 4 (3 bytes, padded) + 8 (5 chars, padded) + 8, then 8 + 24 + 8 per record)
    expect(layout.recordStart - layout.headerSize).toBe(48 + 12 + 8 + 4 + 8 + 8);
    expect(layout.recordSize).toBe(8 + 24 + 8);
    expect(bytes.length).toBe(layout.recordStart + 3 * layout.recordSize);
  });

  it("a streamed file is valid after every record: header with numrecs = k plus k records", () => {
    const schema: NcSchema = { dimensions: [{ name: "time", length: "unlimited" }, { name: "n", length: 4 }], variables: [
      { name: "a", type: "double", dimensions: ["n"] }, { name: "time", type: "double", dimensions: ["time"] }, { name: "v", type: "double", dimensions: ["time", "n"] },
    ] };
    const layout = planFile(schema);
    const rb = new RecordBuffer(layout);
    const fixed = encodeFile(layout, { a: [1, 2, 3, 4] }, []);
    for (let k = 1; k <= 3; k++) {
      const file = new Uint8Array(layout.recordStart + k * layout.recordSize);
      file.set(fixed.subarray(0, layout.recordStart));
      for (let i = 0; i < k; i++) {
        rb.setScalar("time", i).set("v", [i, i, i, i]);
        file.set(rb.bytes, recordOffset(layout, i));
      }
      file.set(encodeHeader(layout, k).subarray(0, 8).subarray(4, 8), 4);
      const r = new NetCDFReader(file);
      expect(r.recordDimension.length).toBe(k);
      expect(num(r, "time")).toEqual(Array.from({ length: k }, (_, i) => i));
    }
  });

  it("refuses what the format cannot hold, naming the field", () => {
    expect(() => planFile({ dimensions: [{ name: "a", length: "unlimited" }, { name: "b", length: "unlimited" }], variables: [] })).toThrow(/netcdf\.dimensions\.b: .*at most one unlimited/);
    expect(() => planFile({ dimensions: [{ name: "t", length: "unlimited" }, { name: "x", length: 2 }], variables: [{ name: "v", type: "double", dimensions: ["x", "t"] }] })).toThrow(/netcdf\.variables\.v: the unlimited dimension "t" must come first/);
    expect(() => planFile({ dimensions: [{ name: "x", length: 2 ** 30 }], variables: [{ name: "v", type: "double", dimensions: ["x", "x"] }] })).toThrow(/netcdf\.variables\.v: holds .* at most 4294967292/);
    expect(() => planFile({ dimensions: [{ name: "1x", length: 2 }], variables: [] })).toThrow(/netcdf\.dimensions\.1x: .*not a NetCDF name/);
  });
});

describe("cell velocity reconstruction (Perot 2000)", () => {
  it("reproduces a uniform flow exactly on a jittered periodic Voronoi mesh and in a basin's interior", () => {
    // Perot (2000), J. Comput. Phys. 159: U_i = (1/A_i) Σ s l u_e (x_e − x_i) is exact for a constant field
    for (const m of [periodicHexMesh({ cellsX: 10, cellsY: 8, spacing: 15000, jitter: 0.08, seed: 5 }), basinHexMesh({ shape: "ellipse", width: 300000, height: 200000 }, 20000)]) {
      const U = [0.3, -0.17];
      const u = new Float64Array(m.nEdges);
      for (let e = 0; e < m.nEdges; e++) u[e] = m.edgeOpen[e] ? U[0] * m.edgeNormalX[e] + U[1] * m.edgeNormalY[e] : 0;
      const vx = new Float64Array(m.nCells);
      const vy = new Float64Array(m.nCells);
      reconstructCellVelocity(vx, vy, m, cellReconstruction(m), u);
      let worst = 0;
      for (let i = 0; i < m.nCells; i++) {
        let interior = true;
        for (let q = m.cellEdgeOffset[i]; q < m.cellEdgeOffset[i + 1]; q++) if (!m.edgeOpen[m.cellEdgeIndex[q]]) interior = false;
        if (interior) worst = Math.max(worst, Math.abs(vx[i] - U[0]), Math.abs(vy[i] - U[1]));
      }
      expect(worst).toBeLessThan(1e-13);
    }
  });
});

describe("run --netcdf: a UGRID 1.0 / CF 1.8 file", () => {
  for (const [label, scen] of [["periodic", smallPeriodic], ["basin", smallBasin]] as const) {
    it(`${label}: attributes, mesh topology, layer volumes equal to the reported mass`, async () => {
      const sf = writeScenario(`${label}-scen`, scen);
      const nc = join(dir, `${label}.nc`);
      const json = join(dir, `${label}.json`);
      const r = await cli("run", sf, "--netcdf", nc, "--json", json, "--quiet");
      expect(r.err).toBe("");
      expect(r.code).toBe(0);
      const j = JSON.parse(readFileSync(json, "utf8"));
      const f = new NetCDFReader(readFileSync(nc));
      expect(f.version).toBe("64-bit offset format");
      // global attributes (CF 1.8 §2.6)
      expect(f.getAttribute("Conventions")).toBe("CF-1.8 UGRID-1.0");
      expect(String(f.getAttribute("title"))).toContain(scen.name);
      expect(f.getAttribute("source")).toBe(`Stepwell ${pkgVersion}`);
      expect(JSON.parse(String(f.getAttribute("scenario"))).name).toBe(scen.name);
      expect(JSON.parse(String(f.getAttribute("stepper")))).toMatchObject({ method: "rk4", dt: scen.stepper.dt });
      // output times: the start, every outputInterval, the end (duration / outputInterval + 1)
      const times = num(f, "time");
      expect(times).toEqual([0, 1, 2, 3, 4].map((k) => k * scen.outputInterval));
      expect(j.netcdf.outputTimes).toBe(5);
      expect(attr(f, "time", "units")).toBe("seconds since 2000-01-01 00:00:00");
      expect(attr(f, "time", "calendar")).toBe("standard");
      expect(attr(f, "time", "standard_name")).toBe("time");
      // UGRID 1.0 mesh topology
      expect(attr(f, "mesh", "cf_role")).toBe("mesh_topology");
      expect(attr(f, "mesh", "topology_dimension")).toBe(2);
      expect(attr(f, "mesh", "node_coordinates")).toBe("node_x node_y");
      expect(attr(f, "mesh", "face_coordinates")).toBe("face_x face_y");
      expect(attr(f, "mesh", "edge_coordinates")).toBe("edge_x edge_y");
      expect(attr(f, "mesh", "face_node_connectivity")).toBe("face_nodes");
      expect(attr(f, "mesh", "edge_node_connectivity")).toBe("edge_nodes");
      for (const v of ["face_nodes", "edge_nodes"]) {
        expect(attr(f, v, "cf_role")).toBe(v === "face_nodes" ? "face_node_connectivity" : "edge_node_connectivity");
        expect(attr(f, v, "start_index")).toBe(0);
        expect(attr(f, v, "_FillValue")).toBe(-1);
      }
      // CF: units and long_name on every variable; standard names from the CF standard-name table
      for (const v of f.variables) {
        expect(attr(f, v.name, "units"), v.name).toBeTypeOf("string");
        expect(attr(f, v.name, "long_name"), v.name).toBeTypeOf("string");
      }
      const std: Record<string, string> = {
        face_area: "cell_area", layer_thickness: "cell_thickness", surface_height: "sea_surface_height_above_geoid",
        velocity_x: "sea_water_x_velocity", velocity_y: "sea_water_y_velocity", bottom_depth: "sea_floor_depth_below_geoid",
        layer_density: "sea_water_density", node_x: "projection_x_coordinate", face_y: "projection_y_coordinate",
      };
      for (const [v, s] of Object.entries(std)) expect(attr(f, v, "standard_name"), v).toBe(s);
      // layer data
      expect(num(f, "layer_density")).toEqual(scen.layers.map((l) => l.density));
      expect(num(f, "layer_rest_thickness")).toEqual(scen.layers.map((l) => l.thickness));
      // the layer volumes computed from the file (Σ area · thickness) equal the run's reported mass
      const area = num(f, "face_area");
      const nc0 = area.length;
      const L = scen.layers.length;
      const hLast = (f.getDataVariable("layer_thickness") as number[][]).at(-1)!;
      const h0 = (f.getDataVariable("layer_thickness") as number[][])[0];
      const volumes = (h: number[]) => Array.from({ length: L }, (_, k) => { let s = 0; for (let i = 0; i < nc0; i++) s += area[i] * h[k * nc0 + i]; return s; });
      volumes(hLast).forEach((v, k) => expect(Math.abs(v - j.mass.final[k]) / j.mass.final[k]).toBeLessThan(1e-14));
      volumes(h0).forEach((v, k) => expect(Math.abs(v - j.mass.initial[k]) / j.mass.initial[k]).toBeLessThan(1e-14));
      const vol = f.getDataVariable("layer_volume") as number[][];
      vol.at(-1)!.forEach((v, k) => expect(v).toBe(j.mass.final[k]));
      expect((num(f, "total_energy").at(-1)!)).toBeCloseTo(j.energy.final * scen.layers[0].density, 3);
      // free surface = −depth + Σ h
      const eta = (f.getDataVariable("surface_height") as number[][]).at(-1)!;
      const depth = num(f, "bottom_depth");
      for (let i = 0; i < nc0; i += 7) {
        let s = -depth[i];
        for (let k = L - 1; k >= 0; k--) s += hLast[k * nc0 + i];
        expect(eta[i]).toBeCloseTo(s, 9);
      }
      // every face is drawn whole near its centre: no cell across the domain (periodic seam copies)
      const nodeX = num(f, "node_x");
      const nodeY = num(f, "node_y");
      const fx = num(f, "face_x");
      const fy = num(f, "face_y");
      const faceNodes = f.getDataVariable("face_nodes") as number[];
      const maxNodes = f.dimensions.find((d) => d.name === "max_face_nodes")!.size;
      let far = 0;
      for (let i = 0; i < nc0; i++) {
        for (let j2 = 0; j2 < maxNodes; j2++) {
          const n = faceNodes[i * maxNodes + j2];
          if (n < 0) continue;
          far = Math.max(far, Math.hypot(nodeX[n] - fx[i], nodeY[n] - fy[i]));
        }
      }
      // a regular hexagon's corner is d/√3 from its centre (d = 20 km); jitter moves it a little
      expect(far).toBeLessThan(0.75 * 20000);
      // …and every edge is drawn between nodes next to its velocity point, never across the domain
      const ex = num(f, "edge_x");
      const ey = num(f, "edge_y");
      const edgeNodes = f.getDataVariable("edge_nodes") as number[];
      let farEdge = 0;
      for (let e = 0; e < ex.length; e++) for (const n of [edgeNodes[2 * e], edgeNodes[2 * e + 1]]) farEdge = Math.max(farEdge, Math.hypot(nodeX[n] - ex[e], nodeY[n] - ey[e]));
      expect(farEdge).toBeLessThan(0.5 * 20000);
      const copies = f.dimensions.find((d) => d.name === "node")!.size - createRun(scen).mesh.nVertices;
      if (label === "periodic") expect(copies).toBeGreaterThan(0);
      else expect(copies).toBe(0);
    });
  }

  it("records the energy budget terms when the run provides them (hook for the run's energyBudget)", () => {
    const run = createRun(smallPeriodic);
    const terms = { change: 1, windWork: 3, dragLoss: 0.5, viscousLoss: 0.25, residual: -0.75 };
    (run as unknown as { energyBudget: () => typeof terms }).energyBudget = () => terms;
    const w = new RunFileWriter(run, { version: "test", every: 300 });
    const bytes = new Uint8Array(w.layout.recordStart + w.layout.recordSize);
    bytes.set(encodeHeader(w.layout, 1));
    for (const fx of w.fixedData()) bytes.set(fx.bytes, fx.begin);
    bytes.set(w.fill().bytes, w.layout.recordStart);
    const f = new NetCDFReader(bytes);
    const rho0 = smallPeriodic.layers[0].density;
    expect(num(f, "wind_work")).toEqual([3 * rho0]);
    expect(num(f, "energy_residual")).toEqual([-0.75 * rho0]);
    expect(attr(f, "drag_loss", "units")).toBe("J");
    // without the hook, no budget variables
    const plain = new RunFileWriter(createRun(smallPeriodic), { version: "test", every: 300 });
    expect(plain.layout.variables.has("wind_work")).toBe(false);
  });

  it("grows only with the output times written: size = fixed part + records × record size", async () => {
    const sf = writeScenario("size-scen", smallPeriodic);
    const sizes: Record<number, number> = {};
    for (const steps of [5, 40]) {
      const nc = join(dir, `size-${steps}.nc`);
      expect((await cli("run", sf, "--steps", String(steps), "--every", "60", "--netcdf", nc, "--quiet")).code).toBe(0);
      sizes[steps] = statSync(nc).size;
    }
    const run = createRun(smallPeriodic);
    const { nCells: nc, nEdges: ne } = run.mesh;
    const L = 2;
    // per record, doubles: time, step, h (L·nc), η (nc), u (L·ne), vx and vy (2·L·nc), 3 energies, L volumes
    const recordBytes = 8 * (2 + L * nc + nc + L * ne + 2 * L * nc + 3 + L);
    expect(sizes[40] - sizes[5]).toBe(35 * recordBytes);
    const h = parseHeader(readFileSync(join(dir, "size-40.nc")));
    expect(h.recordSize).toBe(recordBytes);
    expect(h.numrecs).toBe(41);
  });

  it("a run killed mid-way leaves a readable file holding every completed output time", async () => {
    const sf = writeScenario("kill-scen", { ...smallPeriodic, mesh: { ...smallPeriodic.mesh, cellsX: 32, cellsY: 32 } });
    const nc = join(dir, "killed.nc");
    // node itself with tsx as a loader (the tsx launcher would leave its node child running when killed);
    // at most 1000 output times of ~110 kB, should the kill come late
    const child = spawn(process.execPath, ["--import", "tsx", "solver/cli/main.ts", "run", sf, "--steps", "5000", "--every", "300", "--netcdf", nc, "--quiet"], { stdio: "ignore" });
    const numrecs = () => {
      if (!existsSync(nc)) return 0;
      const fd = openSync(nc, "r");
      const b = Buffer.alloc(8);
      const n = readSync(fd, b, 0, 8, 0);
      closeSync(fd);
      return n === 8 ? b.readUInt32BE(4) : 0;
    };
    const t0 = Date.now();
    while (numrecs() < 5 && Date.now() - t0 < 60000 && child.exitCode === null) await new Promise((r) => setTimeout(r, 20));
    const exited = new Promise<string | null>((r) => child.on("exit", (_c, sig) => r(sig)));
    child.kill("SIGKILL");
    expect(await exited).toBe("SIGKILL");
    const f = new NetCDFReader(readFileSync(nc));
    const n = f.recordDimension.length;
    expect(n).toBeGreaterThanOrEqual(5);
    const times = num(f, "time");
    expect(times).toEqual(Array.from({ length: n }, (_, i) => 300 * i));
    // every record is complete: its layer volumes are the initial ones (volume is conserved to round-off)
    const vol = f.getDataVariable("layer_volume") as number[][];
    for (const v of vol) v.forEach((x, k) => expect(Math.abs(x - vol[0][k]) / vol[0][k]).toBeLessThan(1e-13));
  }, 90000);
});
