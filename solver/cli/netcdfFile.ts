import { closeSync, fstatSync, mkdirSync, openSync, readSync, renameSync, rmSync, writeSync } from "node:fs";
import { dirname } from "node:path";
import { SolverError } from "../errors.js";
import {
  dataRange, decodeValues, encodeHeader, encodeNumrecs, NcFormatError, NcTruncatedError, parseHeader, recordOffset,
  type NcHeader, type NcLayout, type NcVariableRead, type RecordBuffer,
} from "../io/netcdf.js";

/**
 * A NetCDF file written as a run goes. `create` writes the header and the fixed data to a temporary name and
 * renames it into place (so FILE is never half a header); `append` writes one record after the last and then
 * rewrites `numrecs`, so at every moment the file is valid and holds every completed record — an interrupted
 * run leaves a readable file. Memory: one record buffer, reused.
 */
export class NetcdfStream {
  private fd: number;
  private numrecs = 0;
  private readonly numrecsBytes = new Uint8Array(4);

  private constructor(readonly path: string, readonly layout: NcLayout, fd: number, private readonly option: string) {
    this.fd = fd;
  }

  get records(): number { return this.numrecs; }

  static create(path: string, layout: NcLayout, fixed: Iterable<{ begin: number; bytes: Uint8Array }>, option = "--netcdf"): NetcdfStream {
    const tmp = `${path}.${process.pid}.tmp`;
    let fd = -1;
    try {
      mkdirSync(dirname(path), { recursive: true });
      fd = openSync(tmp, "w");
      writeAll(fd, encodeHeader(layout, 0), 0);
      for (const f of fixed) writeAll(fd, f.bytes, f.begin);
      closeSync(fd);
      fd = -1;
      renameSync(tmp, path);
      fd = openSync(path, "r+");
    } catch (e) {
      if (fd >= 0) closeSync(fd);
      rmSync(tmp, { force: true });
      throw new SolverError("bad-input", `${option}: cannot write ${path} (${(e as Error).message})`, option);
    }
    return new NetcdfStream(path, layout, fd, option);
  }

  /** Write the buffer as the next record, then count it in the header. */
  append(record: RecordBuffer): void {
    if (this.fd < 0) throw new Error(`${this.path}: already closed`);
    try {
      writeAll(this.fd, record.bytes, recordOffset(this.layout, this.numrecs));
      this.numrecs++;
      writeAll(this.fd, encodeNumrecs(this.numrecs, this.numrecsBytes), 4);
    } catch (e) {
      throw new SolverError("bad-input", `${this.option}: cannot write ${this.path} (${(e as Error).message})`, this.option);
    }
  }

  close(): void {
    if (this.fd >= 0) closeSync(this.fd);
    this.fd = -1;
  }
}

function writeAll(fd: number, bytes: Uint8Array, position: number): void {
  let done = 0;
  while (done < bytes.length) done += writeSync(fd, bytes, done, bytes.length - done, position + done);
}

/** A NetCDF file opened for reading slices (the header once, then only the bytes asked for). */
export class NetcdfReader {
  private constructor(readonly path: string, readonly header: NcHeader, private readonly fd: number, readonly size: number) {}

  /**
   * Open and parse the header. `problem(msg)` builds the error for a file that is missing or not NetCDF.
   * The header is read in growing chunks, so a long file is never read whole.
   */
  static open(path: string, problem: (msg: string) => SolverError): NetcdfReader {
    let fd: number;
    try {
      fd = openSync(path, "r");
    } catch (e) {
      const code = (e as NodeJS.ErrnoException).code;
      throw problem(code === "ENOENT" ? `${path} does not exist` : `cannot read ${path} (${(e as Error).message})`);
    }
    try {
      const size = fstatSync(fd).size;
      let chunk = Math.min(size, 1 << 16);
      for (;;) {
        const buf = new Uint8Array(chunk);
        readAll(fd, buf, 0);
        try {
          const header = parseHeader(buf);
          return new NetcdfReader(path, header, fd, size);
        } catch (e) {
          if (e instanceof NcTruncatedError && chunk < size) { chunk = Math.min(size, chunk * 4); continue; }
          if (e instanceof NcTruncatedError) throw problem(`${path} is not a NetCDF file (it ends inside its header)`);
          if (e instanceof NcFormatError) throw problem(`${path} is not a NetCDF-3 file (${e.message})`);
          throw e;
        }
      }
    } catch (e) {
      closeSync(fd);
      throw e;
    }
  }

  /** Records present: the header's count, limited to what the file's length really holds. */
  get numrecs(): number {
    const h = this.header;
    let recordStart = Infinity;
    for (const v of h.variables.values()) if (v.record) recordStart = Math.min(recordStart, v.begin);
    if (!Number.isFinite(recordStart) || h.recordSize === 0) return Math.max(0, h.numrecs);
    const fit = Math.floor((this.size - recordStart) / h.recordSize);
    return h.numrecs < 0 ? Math.max(0, fit) : Math.max(0, Math.min(h.numrecs, fit));
  }

  variable(name: string): NcVariableRead | undefined {
    return this.header.variables.get(name);
  }

  /** Values of a variable (of record `index` for a record variable). */
  read(name: string, index = 0): Float64Array | Int32Array | string {
    const v = this.header.variables.get(name);
    if (!v) throw new Error(`${this.path}: no variable ${name}`);
    const { offset, length } = dataRange(this.header, v, index);
    const buf = new Uint8Array(length);
    readAll(this.fd, buf, offset);
    return decodeValues(v.type, buf, 0, v.count);
  }

  /** A record variable of one value per record, over all records (e.g. time). */
  series(name: string): Float64Array {
    const n = this.numrecs;
    const out = new Float64Array(n);
    for (let i = 0; i < n; i++) out[i] = Number((this.read(name, i) as Float64Array | Int32Array)[0]);
    return out;
  }

  close(): void {
    closeSync(this.fd);
  }
}

function readAll(fd: number, buf: Uint8Array, position: number): void {
  let done = 0;
  while (done < buf.length) {
    const n = readSync(fd, buf, done, buf.length - done, position + done);
    if (n === 0) throw new NcTruncatedError();
    done += n;
  }
}
