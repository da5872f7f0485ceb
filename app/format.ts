/** Number formatting shared by the panels. */
export function fmt(v: number, digits = 3): string {
  if (!Number.isFinite(v)) return String(v);
  if (v === 0) return "0";
  const a = Math.abs(v);
  if (a >= 1e5 || a < 1e-3) return v.toExponential(digits - 1);
  return Number(v.toPrecision(digits)).toString();
}

export function formatDays(seconds: number): string {
  const d = seconds / 86400;
  if (d < 1) return `${(seconds / 3600).toFixed(2)} h`;
  return `${d.toFixed(3)} d`;
}

export function km(m: number, digits = 1): string {
  return `${(m / 1000).toFixed(digits)} km`;
}
