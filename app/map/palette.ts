import { interpolateLab, interpolateViridis, rgb } from "d3";

/**
 * Colour tables of 256 entries packed as RGBA bytes in a Uint32 (little-endian, as ImageData stores them).
 * Diverging: the cool-warm end colours of Moreland (2009, "Diverging color maps for scientific visualization")
 * through a light grey, interpolated in CIELAB so lightness changes evenly on each side.
 * Sequential: viridis (van der Walt and Smith, 2015), perceptually uniform.
 */
export const PALETTE_SIZE = 256;

function pack(css: string): number {
  const c = rgb(css);
  return ((255 << 24) | (Math.round(c.b) << 16) | (Math.round(c.g) << 8) | Math.round(c.r)) >>> 0;
}

const coolToGrey = interpolateLab("rgb(59,76,192)", "rgb(221,221,221)");
const greyToWarm = interpolateLab("rgb(221,221,221)", "rgb(180,4,38)");

export function divergingColour(t: number): string {
  return t < 0.5 ? coolToGrey(2 * t) : greyToWarm(2 * t - 1);
}
export const sequentialColour = interpolateViridis;

function table(f: (t: number) => string): Uint32Array {
  const out = new Uint32Array(PALETTE_SIZE);
  for (let i = 0; i < PALETTE_SIZE; i++) out[i] = pack(f(i / (PALETTE_SIZE - 1)));
  return out;
}

export const DIVERGING = table(divergingColour);
export const SEQUENTIAL = table(sequentialColour);
/** Land and no-data pixels. */
export const LAND = pack("rgb(214,205,186)");
export const NO_VALUE = pack("rgb(60,60,60)");

/** The value range the colours span: symmetric about zero for anomalies, min..max for magnitudes. */
export function colourDomain(scale: "diverging" | "sequential", min: number, max: number): [number, number] {
  if (!Number.isFinite(min) || !Number.isFinite(max)) return [0, 1];
  if (scale === "diverging") {
    // a field that is zero everywhere (a basin at rest) gets a unit range, so the bar reads ±1 rather than ±1e-30
    const lim = Math.max(Math.abs(min), Math.abs(max)) || 1;
    return [-lim, lim];
  }
  const half = 0.5 * (Math.abs(min) || 1);
  return max > min ? [min, max] : [min - half, min + half];
}
