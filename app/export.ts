/**
 * Exports of the page's figures and tables: a plot as a standalone SVG file (the page's computed styles written
 * into the copy, so it looks the same outside the page) or as a PNG (that SVG drawn onto a canvas at twice its
 * size), a canvas as PNG, a table as CSV (d3-dsv's RFC 4180 quoting) or JSON. Files are offered as downloads.
 */
import { csvFormatRows } from "d3";

/** PNG exports of an SVG are drawn at this many pixels per SVG unit. */
export const PNG_SCALE = 2;

/** Presentation properties copied from the page's computed style into the exported copy. */
const STYLE_PROPS = [
  "fill", "fill-opacity", "stroke", "stroke-width", "stroke-dasharray", "stroke-opacity", "opacity",
  "font-family", "font-size", "font-weight", "font-style", "text-anchor", "dominant-baseline", "visibility",
];

/** A file name from a title: lower case, words joined by hyphens. */
export function fileStem(title: string): string {
  return title.normalize("NFKD").replace(/[^\w\s-]/g, "").trim().toLowerCase().replace(/[\s_]+/g, "-").replace(/-+/g, "-").slice(0, 80) || "figure";
}

/** Standalone SVG text of an element on the page, with its look carried over as inline styles. */
export function svgText(svg: SVGSVGElement): string {
  const copy = svg.cloneNode(true) as SVGSVGElement;
  const from = [svg, ...Array.from(svg.querySelectorAll("*"))];
  const to = [copy, ...Array.from(copy.querySelectorAll("*"))];
  from.forEach((el, i) => {
    const cs = getComputedStyle(el);
    const style = STYLE_PROPS.map((p) => `${p}:${cs.getPropertyValue(p)}`).filter((s) => !s.endsWith(":")).join(";");
    (to[i] as SVGElement).setAttribute("style", style);
  });
  const { width, height } = svgSize(svg);
  copy.setAttribute("xmlns", "http://www.w3.org/2000/svg");
  copy.setAttribute("width", String(width));
  copy.setAttribute("height", String(height));
  if (!copy.getAttribute("viewBox")) copy.setAttribute("viewBox", `0 0 ${width} ${height}`);
  // a white ground, as on the page
  const bg = document.createElementNS("http://www.w3.org/2000/svg", "rect");
  bg.setAttribute("width", "100%");
  bg.setAttribute("height", "100%");
  bg.setAttribute("fill", "#ffffff");
  copy.insertBefore(bg, copy.firstChild);
  return `<?xml version="1.0" encoding="UTF-8"?>\n${new XMLSerializer().serializeToString(copy)}\n`;
}

function svgSize(svg: SVGSVGElement): { width: number; height: number } {
  const w = Number(svg.getAttribute("width"));
  const h = Number(svg.getAttribute("height"));
  if (w > 0 && h > 0) return { width: w, height: h };
  const r = svg.getBoundingClientRect();
  return { width: Math.round(r.width), height: Math.round(r.height) };
}

export function download(blob: Blob, name: string): void {
  const a = document.createElement("a");
  a.href = URL.createObjectURL(blob);
  a.download = name;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(a.href), 2000);
}

export function exportSvg(svg: SVGSVGElement, stem: string): void {
  download(new Blob([svgText(svg)], { type: "image/svg+xml" }), `${stem}.svg`);
}

/** The SVG drawn onto a canvas of PNG_SCALE × its size (white ground), as a PNG blob. */
export async function svgPng(svg: SVGSVGElement): Promise<Blob> {
  const { width, height } = svgSize(svg);
  const url = URL.createObjectURL(new Blob([svgText(svg)], { type: "image/svg+xml" }));
  try {
    const img = new Image();
    img.decoding = "sync";
    await new Promise<void>((resolve, reject) => {
      img.onload = () => resolve();
      img.onerror = () => reject(new Error("the figure could not be drawn as an image"));
      img.src = url;
    });
    const canvas = document.createElement("canvas");
    canvas.width = Math.round(width * PNG_SCALE);
    canvas.height = Math.round(height * PNG_SCALE);
    const ctx = canvas.getContext("2d")!;
    ctx.fillStyle = "#ffffff";
    ctx.fillRect(0, 0, canvas.width, canvas.height);
    ctx.drawImage(img, 0, 0, canvas.width, canvas.height);
    return await canvasPng(canvas);
  } finally {
    URL.revokeObjectURL(url);
  }
}

export function canvasPng(canvas: HTMLCanvasElement): Promise<Blob> {
  return new Promise((resolve, reject) => canvas.toBlob((b) => (b ? resolve(b) : reject(new Error("the canvas could not be encoded"))), "image/png"));
}

export async function exportPng(svg: SVGSVGElement, stem: string): Promise<void> {
  download(await svgPng(svg), `${stem}.png`);
}

export async function exportCanvas(canvas: HTMLCanvasElement, stem: string): Promise<void> {
  download(await canvasPng(canvas), `${stem}.png`);
}

export type Cell = string | number | boolean | null | undefined;

/** CSV text: a header line, then one line per row; empty for null, undefined and non-finite numbers. */
export function csvText(header: readonly string[], rows: readonly (readonly Cell[])[]): string {
  const cell = (v: Cell) => (v === null || v === undefined || (typeof v === "number" && !Number.isFinite(v)) ? "" : String(v));
  return `${csvFormatRows([[...header], ...rows.map((r) => r.map(cell))])}\n`;
}

export function exportCsv(stem: string, header: readonly string[], rows: readonly (readonly Cell[])[]): void {
  download(new Blob([csvText(header, rows)], { type: "text/csv" }), `${stem}.csv`);
}

export function exportJson(stem: string, value: unknown): void {
  download(new Blob([`${JSON.stringify(value, null, 2)}\n`], { type: "application/json" }), `${stem}.json`);
}
