/**
 * Content hashes for caching and for checking that shards belong to the same study.
 * A 128-bit digest from four independent 32-bit multiply–rotate lanes over the UTF-16 code units of a
 * canonical JSON text (object keys sorted) and over the raw words of Float64Arrays. Not cryptographic;
 * it only has to make accidental collisions between study definitions negligible.
 */

/** JSON with object keys sorted at every level, so equal content gives equal text. */
export function canonicalJson(v: unknown): string {
  if (v === null || typeof v !== "object") return JSON.stringify(v) ?? "null";
  if (ArrayBuffer.isView(v)) return canonicalJson(Array.from(v as unknown as ArrayLike<number>));
  if (Array.isArray(v)) return `[${v.map(canonicalJson).join(",")}]`;
  const o = v as Record<string, unknown>;
  const keys = Object.keys(o).filter((k) => o[k] !== undefined).sort();
  return `{${keys.map((k) => `${JSON.stringify(k)}:${canonicalJson(o[k])}`).join(",")}}`;
}

const SEEDS = [0x243f6a88, 0x85a308d3, 0x13198a2e, 0x03707344];
const MULTS = [0x9e3779b1, 0x85ebca77, 0xc2b2ae3d, 0x27d4eb2f];

class Digest {
  private h = Uint32Array.from(SEEDS);
  private count = 0;
  word(w: number): void {
    const h = this.h;
    for (let l = 0; l < 4; l++) {
      let x = (h[l] ^ Math.imul(w >>> 0, MULTS[l])) >>> 0;
      x = ((x << 13) | (x >>> 19)) >>> 0;
      h[l] = (Math.imul(x, 5) + 0xe6546b64 + l) >>> 0;
    }
    this.count++;
  }
  text(s: string): void {
    for (let i = 0; i < s.length; i++) this.word(s.charCodeAt(i));
    this.word(0xffffffff);
  }
  floats(a: Float64Array): void {
    const w = new Uint32Array(a.buffer, a.byteOffset, a.length * 2);
    for (let i = 0; i < w.length; i++) this.word(w[i]);
    this.word(0xfffffffe);
  }
  hex(): string {
    const h = Uint32Array.from(this.h);
    // final avalanche per lane, mixing in the length and the other lanes
    for (let l = 0; l < 4; l++) {
      let x = (h[l] ^ this.count ^ h[(l + 1) & 3]) >>> 0;
      x = Math.imul(x ^ (x >>> 16), 0x85ebca6b) >>> 0;
      x = Math.imul(x ^ (x >>> 13), 0xc2b2ae35) >>> 0;
      h[l] = (x ^ (x >>> 16)) >>> 0;
    }
    return Array.from(h, (x) => x.toString(16).padStart(8, "0")).join("");
  }
}

/** Hash of any JSON-like values and Float64Arrays, in order. */
export function contentHash(...parts: unknown[]): string {
  const d = new Digest();
  for (const p of parts) {
    if (p instanceof Float64Array) d.floats(p);
    else d.text(canonicalJson(p));
  }
  return d.hex();
}
