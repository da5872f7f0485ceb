import { SolverError } from "../errors.js";

export interface Shard {
  /** 1-based slice number. */
  index: number;
  count: number;
}

/** "i/n" → { index: i, count: n } with whole numbers 1 ≤ i ≤ n. */
export function parseShard(text: string, field = "--shard"): Shard {
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  const bad = () => new SolverError("bad-input", `${field}: must be i/n with whole numbers 1 ≤ i ≤ n (slice i of n), got "${text}"`, field);
  if (!m) throw bad();
  const index = Number(m[1]);
  const count = Number(m[2]);
  if (!(count >= 1 && index >= 1 && index <= count)) throw bad();
  return { index, count };
}

/**
 * The work items of slice i of n: every n-th item starting at i − 1 (round robin, so that the expensive small-Δt
 * runs spread over the slices). Together the slices cover every item exactly once.
 */
export function shardItems(nItems: number, shard: Shard): number[] {
  const out: number[] = [];
  for (let k = shard.index - 1; k < nItems; k += shard.count) out.push(k);
  return out;
}

/** What every partial result carries so that `merge` can check the parts belong together. */
export interface PartHeader {
  kind: string;
  version: 1;
  /** Content hash of the study definition (scenario, initial state, steppers, Δt, options). */
  study: string;
  shard: Shard;
  nItems: number;
  /** The items (indices into the full work list) this part holds, ascending. */
  items: number[];
  /** Present on a slice that was stopped before it finished (it then holds only the items it finished); `merge` refuses it. */
  status?: "interrupted";
}

/** Check a set of parts: same kind, same study, every slice once, every item once. Returns them sorted by slice. */
export function checkParts<P extends PartHeader>(parts: readonly P[], kind: string): P[] {
  if (!parts.length) throw new SolverError("bad-input", "PARTS: give the partial result files to merge", "PARTS");
  parts.forEach((p, i) => {
    if (!p || typeof p !== "object" || p.kind !== kind || !Array.isArray(p.items) || !p.shard) {
      throw new SolverError("bad-input", `PARTS: part ${i + 1} is not a ${kind} partial result (written with --shard)`, "PARTS");
    }
  });
  parts.forEach((p, i) => {
    if (p.status === "interrupted") {
      throw new SolverError("bad-input", `PARTS: part ${i + 1} (slice ${p.shard.index}/${p.shard.count}) was interrupted after ${p.items.length} of its work items; run that slice again`, "PARTS");
    }
  });
  const first = parts[0];
  const seen = new Map<number, number>();
  const items = new Set<number>();
  parts.forEach((p, i) => {
    if (p.study !== first.study) throw new SolverError("bad-input", `PARTS: part ${i + 1} belongs to a different study (scenario, steppers, Δt or options differ)`, "PARTS");
    if (p.shard.count !== first.shard.count) throw new SolverError("bad-input", `PARTS: part ${i + 1} is slice ${p.shard.index}/${p.shard.count}, the first is of ${first.shard.count} slices`, "PARTS");
    if (seen.has(p.shard.index)) throw new SolverError("bad-input", `PARTS: slice ${p.shard.index}/${p.shard.count} is given twice (parts ${seen.get(p.shard.index)! + 1} and ${i + 1})`, "PARTS");
    seen.set(p.shard.index, i);
    for (const k of p.items) {
      if (items.has(k)) throw new SolverError("bad-input", `PARTS: work item ${k} appears in two parts`, "PARTS");
      items.add(k);
    }
  });
  const missing: number[] = [];
  for (let s = 1; s <= first.shard.count; s++) if (!seen.has(s)) missing.push(s);
  if (missing.length) throw new SolverError("bad-input", `PARTS: missing slice${missing.length > 1 ? "s" : ""} ${missing.map((s) => `${s}/${first.shard.count}`).join(", ")}`, "PARTS");
  if (items.size !== first.nItems) throw new SolverError("bad-input", `PARTS: the parts hold ${items.size} of ${first.nItems} work items`, "PARTS");
  return [...parts].sort((a, b) => a.shard.index - b.shard.index);
}
