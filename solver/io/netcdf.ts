import { SolverError } from "../errors.js";

/**
 * NetCDF-3 files in the 64-bit-offset form ("CDF-2"), written and read by hand: a header, the fixed-size
 * variables one after the other, then records along one unlimited dimension, each record holding one slab of
 * every record variable in the order they are declared. Everything is big-endian and padded to 4 bytes.
 * Layout after the NetCDF classic and 64-bit offset format specification (Rew, Davis, Emmerson and Davies,
 * "NetCDF User's Guide", Unidata, appendix "File Format Specifications").
 *
 * Pure: no file system. `planFile` fixes where every byte goes; `encodeHeader`, `encodeFixed` and
 * `RecordBuffer` produce the bytes, and the caller writes them (solver/cli/netcdfFile.ts streams records to a
 * file and rewrites `numrecs` after each, so an interrupted writer leaves a valid file). `parseHeader` and
 * `decodeValues` read such files back (restarts).
 */

// TextEncoder and TextDecoder exist in Node and in workers; the solver's DOM-free lib leaves their types out.
declare const TextEncoder: { new (): { encode(s: string): Uint8Array } };
declare const TextDecoder: { new (): { decode(b: Uint8Array): string } };

export type NcNumericType = "byte" | "short" | "int" | "float" | "double";
export type NcType = NcNumericType | "char";

const TYPE_CODE: Record<NcType, number> = { byte: 1, char: 2, short: 3, int: 4, float: 5, double: 6 };
const CODE_TYPE: Record<number, NcType> = { 1: "byte", 2: "char", 3: "short", 4: "int", 5: "float", 6: "double" };
const TYPE_SIZE: Record<NcType, number> = { byte: 1, char: 1, short: 2, int: 4, float: 4, double: 8 };

/** A text attribute (NC_CHAR), a double attribute (a number or list), or a typed numeric attribute. */
export type NcAttributeValue = string | number | readonly number[] | { readonly type: NcNumericType; readonly value: number | readonly number[] };
/** Attributes in the order they are written. */
export type NcAttributes = Readonly<Record<string, NcAttributeValue>>;

/** A 32-bit integer attribute (e.g. `start_index`, `_FillValue` of an int variable). */
export function ncInt(value: number | readonly number[]): NcAttributeValue {
  return { type: "int", value };
}

export interface NcDimension {
  readonly name: string;
  /** Length, or "unlimited" for the record dimension (at most one). */
  readonly length: number | "unlimited";
}

export interface NcVariable {
  readonly name: string;
  readonly type: NcType;
  /** Dimension names, slowest first; a record variable has the unlimited dimension first. */
  readonly dimensions: readonly string[];
  readonly attributes?: NcAttributes;
}

export interface NcSchema {
  readonly dimensions: readonly NcDimension[];
  readonly attributes?: NcAttributes;
  readonly variables: readonly NcVariable[];
}

export interface NcVariableLayout {
  readonly variable: NcVariable;
  /** True for a variable along the unlimited dimension. */
  readonly record: boolean;
  /** Number of values (per record for a record variable). */
  readonly count: number;
  /** Bytes of the data (per record), padded to 4 except for the lone record variable of a 1- or 2-byte type. */
  readonly size: number;
  /** The `vsize` header field: data bytes padded to 4. */
  readonly vsize: number;
  /** Byte offset of the data (of record 0 for a record variable). */
  readonly begin: number;
  /** Offset of this variable's slab inside one record. */
  readonly recordOffset: number;
}

export interface NcLayout {
  readonly schema: NcSchema;
  readonly headerSize: number;
  readonly variables: ReadonlyMap<string, NcVariableLayout>;
  /** Offset of record 0 (end of the fixed-size data). */
  readonly recordStart: number;
  /** Bytes per record (the sum of the record variables' slabs). */
  readonly recordSize: number;
}

/** Values of one variable: numbers (any numeric type) or, for a char variable, text. */
export type NcValues = ArrayLike<number> | string;

/** Largest `vsize` the 32-bit header field can hold (the format's limit on one variable, per record). */
const MAX_VSIZE = 4294967292;
const NAME_RE = /^[A-Za-z_][A-Za-z0-9_.@+-]*$/;

function fail(field: string, message: string): never {
  throw new SolverError("bad-input", `${field}: ${message}`, field);
}

const pad4 = (n: number) => Math.ceil(n / 4) * 4; // not bitwise: sizes may pass 2^31
const utf8 = new TextEncoder();

function checkName(name: string, field: string): void {
  if (!NAME_RE.test(name)) fail(field, `"${name}" is not a NetCDF name (a letter or _, then letters, digits, _ . @ + -)`);
}

interface EncodedAttribute { nameBytes: Uint8Array; type: NcType; count: number; data: Uint8Array }
interface EncodedVariable { v: NcVariable; ids: number[]; record: boolean; count: number; size: number; vsize: number; attrs: EncodedAttribute[]; headerBytes: number }
/** The layout with what the header writer needs. */
interface PlannedLayout extends NcLayout { readonly encoded: EncodedVariable[]; readonly gatts: EncodedAttribute[] }

function encodeAttribute(name: string, v: NcAttributeValue, field: string): EncodedAttribute {
  checkName(name, field);
  const nameBytes = utf8.encode(name);
  if (typeof v === "string") {
    const data = utf8.encode(v);
    return { nameBytes, type: "char", count: data.length, data };
  }
  const typed = typeof v === "object" && !Array.isArray(v) && "type" in v ? (v as { type: NcNumericType; value: number | readonly number[] }) : null;
  const type: NcNumericType = typed ? typed.type : "double";
  const raw = typed ? typed.value : (v as number | readonly number[]);
  const values = typeof raw === "number" ? [raw] : raw;
  if (values.length === 0) fail(field, "a numeric attribute needs at least one value");
  const data = new Uint8Array(values.length * TYPE_SIZE[type]);
  writeValues(new DataView(data.buffer), 0, type, values, values.length, field);
  return { nameBytes, type, count: values.length, data };
}

function attributeListSize(list: readonly EncodedAttribute[]): number {
  let n = 8;
  for (const a of list) n += 4 + pad4(a.nameBytes.length) + 8 + pad4(a.data.length);
  return n;
}

function encodeAttributes(attrs: NcAttributes | undefined, field: string): EncodedAttribute[] {
  return Object.entries(attrs ?? {}).map(([k, v]) => encodeAttribute(k, v, `${field}.${k}`));
}

/** Where every variable goes. Validates names, dimensions and sizes. */
export function planFile(schema: NcSchema): NcLayout {
  const dimIndex = new Map<string, number>();
  let recordDim = -1;
  schema.dimensions.forEach((d, i) => {
    const f = `netcdf.dimensions.${d.name}`;
    checkName(d.name, f);
    if (dimIndex.has(d.name)) fail(f, "is declared twice");
    if (d.length === "unlimited") {
      if (recordDim >= 0) fail(f, "a NetCDF-3 file has at most one unlimited dimension");
      recordDim = i;
    } else if (!Number.isInteger(d.length) || d.length < 1) fail(f, `length must be a whole number ≥ 1, got ${d.length}`);
    dimIndex.set(d.name, i);
  });
  const gatts = encodeAttributes(schema.attributes, "netcdf.attributes");
  const names = new Set<string>();
  const recordVars = schema.variables.filter((v) => v.dimensions[0] !== undefined && dimIndex.get(v.dimensions[0]) === recordDim && recordDim >= 0);
  const encodedVars = schema.variables.map((v): EncodedVariable => {
    const f = `netcdf.variables.${v.name}`;
    checkName(v.name, f);
    if (names.has(v.name)) fail(f, "is declared twice");
    names.add(v.name);
    if (!(v.type in TYPE_CODE)) fail(f, `unknown type "${v.type}"`);
    let count = 1;
    const ids = v.dimensions.map((d, j) => {
      const id = dimIndex.get(d);
      if (id === undefined) fail(f, `unknown dimension "${d}"`);
      if (id === recordDim && j !== 0) fail(f, `the unlimited dimension "${d}" must come first`);
      if (id !== recordDim) count *= schema.dimensions[id].length as number;
      return id;
    });
    const record = ids.length > 0 && ids[0] === recordDim;
    const bytes = count * TYPE_SIZE[v.type];
    const vsize = pad4(bytes);
    if (vsize > MAX_VSIZE) fail(f, `holds ${bytes} bytes${record ? " per record" : ""}; the 64-bit offset format allows at most ${MAX_VSIZE}`);
    // the spec's one exception: a lone record variable of a 1- or 2-byte type is not padded between records
    const size = record && recordVars.length === 1 && TYPE_SIZE[v.type] < 4 ? bytes : vsize;
    const attrs = encodeAttributes(v.attributes, f);
    const headerBytes = 4 + pad4(utf8.encode(v.name).length) + 4 + 4 * ids.length + attributeListSize(attrs) + 4 + 4 + 8;
    return { v, ids, record, count, size, vsize, attrs, headerBytes };
  });
  let headerSize = 4 + 4 + 8; // magic, numrecs, dim_list tag and count
  for (const d of schema.dimensions) headerSize += 4 + pad4(utf8.encode(d.name).length) + 4;
  headerSize += attributeListSize(gatts) + 8;
  for (const e of encodedVars) headerSize += e.headerBytes;
  const variables = new Map<string, NcVariableLayout>();
  let offset = headerSize;
  for (const e of encodedVars) {
    if (e.record) continue;
    variables.set(e.v.name, { variable: e.v, record: false, count: e.count, size: e.vsize, vsize: e.vsize, begin: offset, recordOffset: 0 });
    offset += e.vsize;
  }
  const recordStart = offset;
  let inRecord = 0;
  for (const e of encodedVars) {
    if (!e.record) continue;
    variables.set(e.v.name, { variable: e.v, record: true, count: e.count, size: e.size, vsize: e.vsize, begin: recordStart + inRecord, recordOffset: inRecord });
    inRecord += e.size;
  }
  const layout: PlannedLayout = { schema, headerSize, variables, recordStart, recordSize: inRecord, encoded: encodedVars, gatts };
  return layout;
}

/** File size after `numrecs` records [bytes]. */
export function fileSize(layout: NcLayout, numrecs: number): number {
  return layout.recordStart + numrecs * layout.recordSize;
}

/** Byte offset of record `index`. */
export function recordOffset(layout: NcLayout, index: number): number {
  return layout.recordStart + index * layout.recordSize;
}

/** The 4 bytes of `numrecs` (bytes 4–7 of the file). */
export function encodeNumrecs(numrecs: number, out = new Uint8Array(4)): Uint8Array {
  if (!Number.isInteger(numrecs) || numrecs < 0 || numrecs >= 0xffffffff) fail("netcdf.numrecs", `must be a whole number below 2^32 − 1, got ${numrecs}`);
  new DataView(out.buffer, out.byteOffset, 4).setUint32(0, numrecs, false);
  return out;
}

/** The header, with `numrecs` records. */
export function encodeHeader(layout: NcLayout, numrecs = 0): Uint8Array {
  const l = layout as PlannedLayout;
  const out = new Uint8Array(layout.headerSize);
  const dv = new DataView(out.buffer);
  let p = 0;
  const u32 = (x: number) => { dv.setUint32(p, x, false); p += 4; };
  const name = (b: Uint8Array) => { u32(b.length); out.set(b, p); p += pad4(b.length); };
  out.set([0x43, 0x44, 0x46, 0x02], 0); // "CDF", version 2: 64-bit offsets
  p = 4;
  u32(numrecs);
  const dims = layout.schema.dimensions;
  if (dims.length) { u32(10); u32(dims.length); } else { u32(0); u32(0); }
  for (const d of dims) { name(utf8.encode(d.name)); u32(d.length === "unlimited" ? 0 : d.length); }
  const attrs = (list: EncodedAttribute[]) => {
    if (!list.length) { u32(0); u32(0); return; }
    u32(12); u32(list.length);
    for (const a of list) { name(a.nameBytes); u32(TYPE_CODE[a.type]); u32(a.count); out.set(a.data, p); p += pad4(a.data.length); }
  };
  attrs(l.gatts);
  if (l.encoded.length) { u32(11); u32(l.encoded.length); } else { u32(0); u32(0); }
  for (const e of l.encoded) {
    const vl = layout.variables.get(e.v.name)!;
    name(utf8.encode(e.v.name));
    u32(e.ids.length);
    for (const id of e.ids) u32(id);
    attrs(e.attrs);
    u32(TYPE_CODE[e.v.type]);
    u32(e.vsize);
    dv.setBigUint64(p, BigInt(vl.begin), false);
    p += 8;
  }
  if (p !== layout.headerSize) throw new Error(`netcdf header: wrote ${p} bytes, planned ${layout.headerSize}`);
  return out;
}

function writeValues(dv: DataView, at: number, type: NcType, values: NcValues, count: number, field: string): void {
  if (type === "char") {
    if (typeof values !== "string") fail(field, "a char variable takes text");
    const b = utf8.encode(values);
    if (b.length > count) fail(field, `text of ${b.length} bytes does not fit in ${count}`);
    for (let i = 0; i < count; i++) dv.setUint8(at + i, i < b.length ? b[i] : 0);
    return;
  }
  if (typeof values === "string") fail(field, `a ${type} variable takes numbers`);
  if (values.length !== count) fail(field, `needs ${count} values, got ${values.length}`);
  switch (type) {
    case "double": for (let i = 0; i < count; i++) dv.setFloat64(at + 8 * i, values[i], false); break;
    case "float": for (let i = 0; i < count; i++) dv.setFloat32(at + 4 * i, values[i], false); break;
    case "int": for (let i = 0; i < count; i++) dv.setInt32(at + 4 * i, values[i], false); break;
    case "short": for (let i = 0; i < count; i++) dv.setInt16(at + 2 * i, values[i], false); break;
    case "byte": for (let i = 0; i < count; i++) dv.setInt8(at + i, values[i]); break;
  }
}

function layoutOf(layout: NcLayout, name: string, record: boolean): NcVariableLayout {
  const v = layout.variables.get(name);
  if (!v) fail(`netcdf.variables.${name}`, "is not declared in the file's schema");
  if (v.record !== record) fail(`netcdf.variables.${name}`, record ? "is not a record variable" : "is a record variable; write it with a RecordBuffer");
  return v;
}

/** The data bytes of one fixed-size variable (padded to `vsize`). */
export function encodeFixed(layout: NcLayout, name: string, values: NcValues): Uint8Array {
  const v = layoutOf(layout, name, false);
  const out = new Uint8Array(v.vsize);
  writeValues(new DataView(out.buffer), 0, v.variable.type, values, v.count, `netcdf.variables.${name}`);
  return out;
}

/** One record's bytes, filled variable by variable and reused from record to record (allocated once). */
export class RecordBuffer {
  readonly bytes: Uint8Array;
  private readonly view: DataView;
  constructor(readonly layout: NcLayout) {
    this.bytes = new Uint8Array(layout.recordSize);
    this.view = new DataView(this.bytes.buffer);
  }
  /** Store the values of record variable `name` in this record. */
  set(name: string, values: NcValues): this {
    const v = layoutOf(this.layout, name, true);
    writeValues(this.view, v.recordOffset, v.variable.type, values, v.count, `netcdf.variables.${name}`);
    return this;
  }
  /** Store a single value (a variable of shape (time)). */
  setScalar(name: string, value: number): this {
    const v = layoutOf(this.layout, name, true);
    writeValues(this.view, v.recordOffset, v.variable.type, [value], v.count, `netcdf.variables.${name}`);
    return this;
  }
}

/** A whole file in memory: fixed data by name, then the records in order. */
export function encodeFile(layout: NcLayout, fixed: Readonly<Record<string, NcValues>>, records: readonly Readonly<Record<string, NcValues>>[]): Uint8Array {
  const out = new Uint8Array(fileSize(layout, records.length));
  out.set(encodeHeader(layout, records.length), 0);
  for (const v of layout.variables.values()) {
    if (v.record) continue;
    const data = fixed[v.variable.name];
    if (data === undefined) fail(`netcdf.variables.${v.variable.name}`, "has no data");
    out.set(encodeFixed(layout, v.variable.name, data), v.begin);
  }
  const rb = new RecordBuffer(layout);
  records.forEach((r, i) => {
    for (const v of layout.variables.values()) {
      if (!v.record) continue;
      const data = r[v.variable.name];
      if (data === undefined) fail(`netcdf.variables.${v.variable.name}`, `has no data in record ${i}`);
      rb.set(v.variable.name, data);
    }
    out.set(rb.bytes, recordOffset(layout, i));
  });
  return out;
}

// ---------------------------------------------------------------- reading

export type NcAttributeRead = string | number[];

export interface NcVariableRead {
  readonly name: string;
  readonly type: NcType;
  /** Dimension names, slowest first. */
  readonly dimensions: readonly string[];
  readonly attributes: ReadonlyMap<string, NcAttributeRead>;
  readonly record: boolean;
  /** Values per record (record variable) or in total. */
  readonly count: number;
  readonly begin: number;
}

export interface NcHeader {
  /** 1 = classic, 2 = 64-bit offset. */
  readonly version: 1 | 2;
  /** Number of records; -1 when the file says "streaming" (count from the file size). */
  readonly numrecs: number;
  readonly dimensions: readonly { name: string; length: number }[];
  readonly recordDimension: string | null;
  readonly attributes: ReadonlyMap<string, NcAttributeRead>;
  readonly variables: ReadonlyMap<string, NcVariableRead>;
  readonly headerSize: number;
  readonly recordSize: number;
}

/** Raised by `parseHeader` when the bytes end inside the header (read more and try again). */
export class NcTruncatedError extends Error {
  constructor() {
    super("the header is longer than the bytes given");
  }
}

/** Raised by `parseHeader` when the bytes are not a NetCDF-3 file. */
export class NcFormatError extends Error {}

const utf8d = new TextDecoder();

/** Parse the header of a classic or 64-bit-offset NetCDF file. */
export function parseHeader(bytes: Uint8Array): NcHeader {
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let p = 0;
  const need = (n: number) => { if (p + n > bytes.length) throw new NcTruncatedError(); };
  const u32 = () => { need(4); const v = dv.getUint32(p, false); p += 4; return v; };
  const name = () => {
    const n = u32();
    if (n > 1 << 20) throw new NcFormatError(`a name of ${n} bytes`);
    need(pad4(n));
    const s = utf8d.decode(bytes.subarray(p, p + n));
    p += pad4(n);
    return s;
  };
  if (bytes.length < 4) throw bytes.length === 0 ? new NcFormatError("the file is empty") : new NcTruncatedError();
  if (bytes[0] !== 0x43 || bytes[1] !== 0x44 || bytes[2] !== 0x46) throw new NcFormatError("it does not start with the NetCDF signature CDF");
  const version = bytes[3];
  if (version !== 1 && version !== 2) throw new NcFormatError(`NetCDF format version ${version} is not read here (only classic 1 and 64-bit offset 2)`);
  p = 4;
  const numrecsRaw = u32();
  const numrecs = numrecsRaw === 0xffffffff ? -1 : numrecsRaw;
  const list = (tag: number, what: string) => {
    const t = u32();
    const n = u32();
    if (t === 0 && n === 0) return 0;
    if (t !== tag) throw new NcFormatError(`bad tag ${t} for the list of ${what}`);
    return n;
  };
  const dimensions: { name: string; length: number }[] = [];
  let recordDimension: string | null = null;
  const nd = list(10, "dimensions");
  for (let i = 0; i < nd; i++) {
    const n = name();
    const len = u32();
    if (len === 0) recordDimension = n;
    dimensions.push({ name: n, length: len });
  }
  const attributes = (): Map<string, NcAttributeRead> => {
    const m = new Map<string, NcAttributeRead>();
    const na = list(12, "attributes");
    for (let i = 0; i < na; i++) {
      const n = name();
      const type = CODE_TYPE[u32()];
      if (!type) throw new NcFormatError(`attribute ${n} has an unknown type`);
      const count = u32();
      const bytesLen = count * TYPE_SIZE[type];
      need(pad4(bytesLen));
      m.set(n, type === "char" ? utf8d.decode(bytes.subarray(p, p + bytesLen)) : Array.from(decodeValues(type, bytes, p, count) as ArrayLike<number>));
      p += pad4(bytesLen);
    }
    return m;
  };
  const gatts = attributes();
  const variables = new Map<string, NcVariableRead>();
  let recordSize = 0;
  const nv = list(11, "variables");
  const recordVars: NcVariableRead[] = [];
  for (let i = 0; i < nv; i++) {
    const n = name();
    const ndims = u32();
    const dims: string[] = [];
    let count = 1;
    for (let j = 0; j < ndims; j++) {
      const id = u32();
      const d = dimensions[id];
      if (!d) throw new NcFormatError(`variable ${n} refers to dimension ${id}, which does not exist`);
      dims.push(d.name);
      if (d.name !== recordDimension) count *= d.length;
    }
    const atts = attributes();
    const type = CODE_TYPE[u32()];
    if (!type) throw new NcFormatError(`variable ${n} has an unknown type`);
    const vsize = u32();
    let begin: number;
    if (version === 1) begin = u32();
    else {
      need(8);
      const big = dv.getBigUint64(p, false);
      p += 8;
      if (big > BigInt(Number.MAX_SAFE_INTEGER)) throw new NcFormatError(`variable ${n} starts beyond 2^53 bytes`);
      begin = Number(big);
    }
    const record = dims.length > 0 && dims[0] === recordDimension;
    const v: NcVariableRead = { name: n, type, dimensions: dims, attributes: atts, record, count, begin };
    if (record) { recordVars.push(v); recordSize += vsize; }
    variables.set(n, v);
  }
  // the spec's exception: a lone record variable of a 1- or 2-byte type has no padding between records
  if (recordVars.length === 1 && TYPE_SIZE[recordVars[0].type] < 4) recordSize = recordVars[0].count * TYPE_SIZE[recordVars[0].type];
  return { version: version as 1 | 2, numrecs, dimensions, recordDimension, attributes: gatts, variables, headerSize: p, recordSize };
}

/** Decode `count` big-endian values of `type` starting at byte `at`. */
export function decodeValues(type: NcType, bytes: Uint8Array, at: number, count: number): Float64Array | Int32Array | string {
  if (at + count * TYPE_SIZE[type] > bytes.length) throw new NcTruncatedError();
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  switch (type) {
    case "char": {
      let end = at + count;
      while (end > at && bytes[end - 1] === 0) end--;
      return utf8d.decode(bytes.subarray(at, end));
    }
    case "double": { const o = new Float64Array(count); for (let i = 0; i < count; i++) o[i] = dv.getFloat64(at + 8 * i, false); return o; }
    case "float": { const o = new Float64Array(count); for (let i = 0; i < count; i++) o[i] = dv.getFloat32(at + 4 * i, false); return o; }
    case "int": { const o = new Int32Array(count); for (let i = 0; i < count; i++) o[i] = dv.getInt32(at + 4 * i, false); return o; }
    case "short": { const o = new Int32Array(count); for (let i = 0; i < count; i++) o[i] = dv.getInt16(at + 2 * i, false); return o; }
    case "byte": { const o = new Int32Array(count); for (let i = 0; i < count; i++) o[i] = dv.getInt8(at + i); return o; }
  }
}

/** Byte range [offset, offset + length) of a variable's data (of record `index` for a record variable). */
export function dataRange(header: NcHeader, v: NcVariableRead, index = 0): { offset: number; length: number } {
  const length = v.count * TYPE_SIZE[v.type];
  return { offset: v.record ? v.begin + index * header.recordSize : v.begin, length };
}
