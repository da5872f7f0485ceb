/**
 * Host side of the WebAssembly kernels (source: assembly/kernels.ts, bytes: binary.ts, built by
 * `npm run build:kernels`). The same bytes and the same code path run in Node and in the browser worker.
 *
 * Each model or operator that uses the kernels owns one `KernelMemory`: a WebAssembly memory holding copies of
 * the mesh arrays and coefficients it reads, its work arrays and an input and an output vector. A call copies its
 * input vector in, runs, and copies the result out, so callers keep passing ordinary Float64Arrays.
 *
 * Why WebAssembly (measured with `npm run bench` beside our own C loop): in V8 the same loops over typed arrays
 * passed as arguments ran 1.8–5.6× the C figure, mostly bounds checks and typed-array base reloads; in wasm the
 * loads are plain loads off one memory base, and the kernels run at about 0.85–1.4× the C figure (the barotropic
 * sub-step stencils the slowest).
 *
 * The module is compiled once per thread, synchronously (allowed in workers and in Node; the solver never runs on
 * a browser's main thread). Where WebAssembly is missing, `kernelsAvailable()` is false and the callers keep
 * their TypeScript loops, which compute the same values.
 */
import { KERNELS_WASM_BASE64 } from "./binary.js";

type Ptr = number;

/** Exported kernels (see assembly/kernels.ts for each argument). */
export interface KernelExports {
  vertexPotentialVorticity(
    qV: Ptr, x: Ptr, nv: number, nc: number, ne: number, uOffset: number, L: number, P: number,
    ve: Ptr, vc: Ptr, cc: Ptr, kf: Ptr, vi: Ptr, cor: Ptr,
  ): void;
  edgeFluxAndPv(flux: Ptr, qE: Ptr, fq: Ptr, x: Ptr, ne: number, nc: number, uOffset: number, L: number, P: number, ec: Ptr, ev: Ptr, qV: Ptr): void;
  cellContinuityBernoulli(
    out: Ptr, bern: Ptr, x: Ptr, nc: number, ne: number, uOffset: number, L: number, P: number, W: number,
    idx: Ptr, dcf: Ptr, kcf: Ptr, bottom: Ptr, rg: Ptr, flux: Ptr,
  ): void;
  edgeMomentum(
    out: Ptr, ne: number, uOffset: number, L: number, P: number, W: number,
    ec: Ptr, open: Ptr, inv: Ptr, slot: Ptr, tw: Ptr, flux: Ptr, qE: Ptr, fq: Ptr, bern: Ptr,
  ): void;
  modalDiagonal(outH: Ptr, outU: Ptr, nc: number, ne: number, WT: number, WC: number, cor: Ptr, gd: Ptr, dd: Ptr, ti: Ptr, ec: Ptr, open: Ptr, ci: Ptr): void;
  modalTwo(out: Ptr, y: Ptr, nc: number, ne: number, WT: number, WC: number, cb: Ptr, gb: Ptr, db: Ptr, ti: Ptr, ec: Ptr, open: Ptr, ci: Ptr): void;
  restOperator(
    out: Ptr, x: Ptr, nc: number, ne: number, L: number, P: number, WT: number, WC: number,
    G: Ptr, mont: Ptr, uI: Ptr, cor: Ptr, cont: Ptr, inv: Ptr, ti: Ptr, ecM: Ptr, open: Ptr, ci: Ptr,
  ): void;
  gradient(out: Ptr, ne: number, ec: Ptr, dc: Ptr, open: Ptr): void;
  divergence(out: Ptr, nc: number, W: number, ci: Ptr, sl: Ptr, area: Ptr): void;
  pvFlux(out: Ptr, flux: Ptr, q: Ptr, fq: Ptr, ne: number, W: number, ti: Ptr, tw: Ptr, open: Ptr): void;
  barotropicCoriolis(out: Ptr, u: Ptr, H: Ptr, hq: Ptr, ne: number, W: number, ti: Ptr, tw: Ptr, open: Ptr): void;
  barotropicSurface(out: Ptr, u: Ptr, H: Ptr, hq: Ptr, nc: number, ne: number, W: number, ci: Ptr, sl: Ptr, area: Ptr): void;
  barotropicPressure(out: Ptr, ne: number, negG: number, ec: Ptr, dc: Ptr, open: Ptr): void;
  windAndDrag(out: Ptr, x: Ptr, ne: number, uOffset: number, L: number, ec: Ptr, open: Ptr, wind: Ptr, rho0: number, drag: number): void;
  vectorLaplacian(
    out: Ptr, u: Ptr, nc: number, ne: number, nv: number, WC: number, ci: Ptr, sl: Ptr, area: Ptr,
    ve: Ptr, vsd: Ptr, vArea: Ptr, vi: Ptr, ec: Ptr, ev: Ptr, dc: Ptr, len: Ptr, open: Ptr, div: Ptr, vort: Ptr,
  ): void;
  addScaled(out: Ptr, a: Ptr, coef: number, n: number): void;
  blockLuSolve(out: Ptr, c: Ptr, y: Ptr, perm: Ptr, nNodes: number, b: number, cp: Ptr, ix: Ptr, lo: Ptr, up: Ptr, di: Ptr): void;
  jacobianPrepare(
    ne: number, nv: number, L: number, P: number, uOffset: number, xBar: Ptr, hEdge: Ptr, flux: Ptr, hVert: Ptr, qVert: Ptr, qEdge: Ptr,
    ubI: Ptr, hEI: Ptr, fI: Ptr, qEI: Ptr, hVI: Ptr, qVI: Ptr,
  ): void;
  jacobianApply(
    out: Ptr, x: Ptr, nc: number, ne: number, nv: number, L: number, P: number, WC: number, WT: number, G: Ptr,
    hI: Ptr, uI: Ptr, dM: Ptr, dF: Ptr, dK: Ptr, dqV: Ptr, dqE: Ptr,
    ubI: Ptr, hEI: Ptr, fI: Ptr, qEI: Ptr, hVI: Ptr, qVI: Ptr,
    ec: Ptr, ev: Ptr, open: Ptr, dc: Ptr, area: Ptr, ci: Ptr, sl: Ptr, lk: Ptr,
    ve: Ptr, vsd: Ptr, vc: Ptr, ka: Ptr, vArea: Ptr, vi: Ptr, ti: Ptr, tw: Ptr,
  ): void;
}

/** The part of the WebAssembly JS API used here (typed locally: the solver compiles without DOM or Node types). */
interface WasmApi {
  Module: new (bytes: Uint8Array) => object;
  Instance: new (module: object, imports: Record<string, Record<string, unknown>>) => { exports: Record<string, unknown> };
  Memory: new (d: { initial: number; maximum?: number }) => { buffer: ArrayBuffer };
}
const host = globalThis as unknown as { WebAssembly?: WasmApi; atob?: (s: string) => string };

let compiled: object | null | undefined;

function module(): object | null {
  if (compiled !== undefined) return compiled;
  compiled = null;
  const wa = host.WebAssembly;
  if (!wa || !host.atob) return null;
  try {
    const raw = host.atob(KERNELS_WASM_BASE64);
    const bytes = new Uint8Array(raw.length);
    for (let i = 0; i < raw.length; i++) bytes[i] = raw.charCodeAt(i);
    compiled = new wa.Module(bytes);
  } catch {
    compiled = null;
  }
  return compiled;
}

/** True when this thread can run the WebAssembly kernels. */
export function kernelsAvailable(): boolean {
  return module() !== null;
}

type Typed = Float64Array | Int32Array | Uint8Array;

/** Largest kernel memory (bytes): 32-bit pointers passed as i32 stay positive below 2³¹. */
export const MAX_KERNEL_BYTES = 2 ** 31 - 65536;

/** A typed array placed in a kernel memory: its byte offset and a view of it. */
export interface Placed<T extends Typed> { readonly ptr: Ptr; readonly view: T }

/**
 * Lays out arrays in one WebAssembly memory, then instantiates the kernels on it. `copy` places a copy of an
 * array (read-only for the kernels), `f64` reserves a zeroed work array. Views are valid once `build()` ran.
 */
export class KernelMemoryBuilder {
  private bytes = 0;
  private readonly items: { ptr: Ptr; src: Typed | null; length: number; kind: "f64" | "i32" | "u8"; slot: { ptr: Ptr; view: Typed } }[] = [];

  private place<T extends Typed>(kind: "f64" | "i32" | "u8", length: number, src: Typed | null): Placed<T> {
    this.bytes = (this.bytes + 15) & ~15;
    const ptr = this.bytes;
    this.bytes += length * (kind === "f64" ? 8 : kind === "i32" ? 4 : 1);
    const slot = { ptr, view: null as unknown as Typed };
    this.items.push({ ptr, src, length, kind, slot });
    return slot as Placed<T>;
  }
  copy<T extends Typed>(a: T): Placed<T> {
    return this.place<T>(a instanceof Float64Array ? "f64" : a instanceof Int32Array ? "i32" : "u8", a.length, a);
  }
  f64(length: number): Placed<Float64Array> {
    return this.place<Float64Array>("f64", length, null);
  }
  /**
   * Instantiate; null when WebAssembly is unavailable, when the arrays need more than MAX_KERNEL_BYTES (pointers
   * are 32-bit, kept below 2³¹), or when the engine refuses the memory — the caller then keeps its TypeScript loops.
   */
  build(): KernelExports | null {
    const mod = module();
    const wa = host.WebAssembly;
    if (!mod || !wa || this.bytes + 16 > MAX_KERNEL_BYTES) return null;
    const pages = Math.max(1, Math.ceil((this.bytes + 16) / 65536));
    let memory: { buffer: ArrayBuffer };
    let instance: { exports: Record<string, unknown> };
    try {
      memory = new wa.Memory({ initial: pages, maximum: pages });
      instance = new wa.Instance(mod, { env: { memory, abort: () => { throw new Error("kernel abort"); } } });
    } catch {
      return null;
    }
    for (const it of this.items) {
      const view = it.kind === "f64" ? new Float64Array(memory.buffer, it.ptr, it.length)
        : it.kind === "i32" ? new Int32Array(memory.buffer, it.ptr, it.length) : new Uint8Array(memory.buffer, it.ptr, it.length);
      if (it.src) view.set(it.src);
      it.slot.view = view;
    }
    return instance.exports as unknown as KernelExports;
  }
}

/**
 * A variable-length stencil (CSR rows `offset`) padded to the width of its longest row, W ≥ 1: entry j of row r at
 * W·r + j. Padding repeats the row's first index (0 for an empty row) with coefficient 0, so a padded sum adds
 * exact zeros. `index(q)` maps a CSR slot to the stored index — the kernels take byte offsets, 8 × the element
 * index (8P × it for layer-interleaved work arrays); each `coef` array is read per slot (length = stride × slots,
 * `stride` values per slot, e.g. an m×m block).
 */
export function padStencil(
  offset: Int32Array, rows: number, index: (q: number) => number, coefs: readonly Float64Array[] = [], stride = 1,
): { width: number; index: Int32Array; coefs: Float64Array[] } {
  let width = 1;
  for (let r = 0; r < rows; r++) width = Math.max(width, offset[r + 1] - offset[r]);
  const idx = new Int32Array(rows * width);
  const out = coefs.map(() => new Float64Array(rows * width * stride));
  for (let r = 0; r < rows; r++) {
    const q0 = offset[r], len = offset[r + 1] - q0;
    const first = len > 0 ? index(q0) : 0;
    for (let j = 0; j < width; j++) {
      const d = r * width + j;
      idx[d] = j < len ? index(q0 + j) : first;
      if (j < len) for (let c = 0; c < coefs.length; c++) for (let s = 0; s < stride; s++) out[c][d * stride + s] = coefs[c][(q0 + j) * stride + s];
    }
  }
  return { width, index: idx, coefs: out };
}

/** Lane stride of layer-interleaved kernel arrays: L rounded up to a multiple of 3 (the kernels' lane block). */
export function laneStride(L: number): number {
  return 3 * Math.ceil(L / 3);
}

/**
 * Per-layer arrays of equal length interleaved by lane: out[P·s + k] = parts[min(k, L − 1)][s] for P = laneStride(L)
 * (lanes past the last layer repeat it, so a padded lane computes a copy of the last layer).
 */
export function interleaveLanes(parts: readonly Float64Array[]): Float64Array {
  const L = parts.length, P = laneStride(L), len = parts[0].length;
  const out = new Float64Array(P * len);
  for (let k = 0; k < P; k++) {
    const a = parts[Math.min(k, L - 1)];
    for (let s = 0; s < len; s++) out[P * s + k] = a[s];
  }
  return out;
}

/**
 * A padded stencil (width W, rows × W entries) in pair layout for kernels that run rows (r, r + 1) as the two lanes
 * of f64x2: slot j of pair p at 2(W·p + j) + lane; an odd last row is repeated in lane 1.
 */
export function pairRows<T extends Int32Array | Float64Array>(a: T, rows: number, width: number): T {
  const pairs = Math.ceil(rows / 2);
  const out = new (a.constructor as new (n: number) => T)(2 * pairs * width);
  for (let p = 0; p < pairs; p++) {
    for (let l = 0; l < 2; l++) {
      const r = Math.min(2 * p + l, rows - 1);
      for (let j = 0; j < width; j++) out[2 * (width * p + j) + l] = a[width * r + j];
    }
  }
  return out;
}
