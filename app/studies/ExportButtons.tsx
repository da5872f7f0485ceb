import { exportCsv, exportJson, exportPng, exportSvg, type Cell } from "../export.js";

/** "SVG" and "PNG" buttons of a plot (`svg` finds the element when clicked). Test ids: `<stem>-svg`, `<stem>-png`. */
export function ExportButtons({ stem, svg }: { stem: string; svg: () => SVGSVGElement | null }) {
  return (
    <span className="export-buttons">
      <button type="button" data-testid={`${stem}-svg`} onClick={() => { const s = svg(); if (s) exportSvg(s, stem); }}>SVG</button>
      <button type="button" data-testid={`${stem}-png`} onClick={() => { const s = svg(); if (s) void exportPng(s, stem); }}>PNG</button>
    </span>
  );
}

/** "CSV" and "JSON" buttons of a table. Test ids: `<stem>-csv`, `<stem>-json`. */
export function TableExports({ stem, header, rows, json }: { stem: string; header: readonly string[]; rows: () => Cell[][]; json: () => unknown }) {
  return (
    <span className="export-buttons">
      <button type="button" data-testid={`${stem}-csv`} onClick={() => exportCsv(stem, header, rows())}>CSV</button>
      <button type="button" data-testid={`${stem}-json`} onClick={() => exportJson(stem, json())}>JSON</button>
    </span>
  );
}
