import { useMemo } from "react";
import { colourDomain, divergingColour, sequentialColour } from "../map/palette.js";
import { fmt } from "../format.js";

interface ColourBarProps {
  readonly scale: "diverging" | "sequential";
  readonly min: number;
  readonly max: number;
  readonly unit: string;
  readonly label: string;
  readonly height: number;
  /** The colours held at [lo, hi] instead of following the field. */
  readonly fixed?: readonly [number, number] | null;
}

/** Vertical colour bar: the colour range with its end values, and the field's actual min and max. */
export function ColourBar({ scale, min, max, unit, label, height, fixed }: ColourBarProps) {
  const [lo, hi] = fixed ?? colourDomain(scale, min, max);
  const colour = scale === "diverging" ? divergingColour : sequentialColour;
  const stops = useMemo(() => Array.from({ length: 17 }, (_, i) => ({ off: `${(100 * i) / 16}%`, c: colour(1 - i / 16) })), [scale]);
  const id = `bar-${scale}`;
  const barH = height - 40;
  return (
    <div className="colour-bar" data-testid="colour-bar">
      <div className="bar-title">{label} [{unit}]</div>
      <svg width={110} height={barH + 16} role="img" aria-label={`colour scale from ${fmt(lo)} to ${fmt(hi)} ${unit}`}>
        <defs>
          <linearGradient id={id} x1="0" y1="0" x2="0" y2="1">
            {stops.map((s) => <stop key={s.off} offset={s.off} stopColor={s.c} />)}
          </linearGradient>
        </defs>
        <rect x={4} y={8} width={22} height={barH} fill={`url(#${id})`} stroke="#444" />
        <text x={32} y={14} className="tick">{fmt(hi)}</text>
        {scale === "diverging" && !fixed && <text x={32} y={8 + barH / 2 + 4} className="tick">0</text>}
        <text x={32} y={8 + barH} className="tick">{fmt(lo)}</text>
      </svg>
      <div className="bar-mode" data-testid="colour-mode">{fixed ? "fixed scale" : "follows the field"}</div>
      <div className="bar-range" data-testid="field-range">
        <div>max {fmt(max, 4)} {unit}</div>
        <div>min {fmt(min, 4)} {unit}</div>
      </div>
    </div>
  );
}
