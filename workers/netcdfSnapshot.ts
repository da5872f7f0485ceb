/**
 * The sandbox's "NetCDF snapshot": the current state as a one-record Stepwell run file (UGRID mesh, CF metadata,
 * the full state in double precision), the same layout `stepwell run --netcdf` writes, so `--restart` reads it.
 */
import type { Run } from "../solver/driver/run.js";
import { encodeHeader, fileSize, recordOffset } from "../solver/io/netcdf.js";
import { RunFileWriter } from "../solver/io/runOutput.js";
import pkg from "../package.json";

export function netcdfSnapshot(run: Run): Uint8Array {
  const w = new RunFileWriter(run, { version: pkg.version, every: run.built.scenario.outputInterval ?? run.dt });
  const out = new Uint8Array(fileSize(w.layout, 1));
  out.set(encodeHeader(w.layout, 1), 0);
  for (const f of w.fixedData()) out.set(f.bytes, f.begin);
  out.set(w.fill().bytes, recordOffset(w.layout, 0));
  return out;
}
