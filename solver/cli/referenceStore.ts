import { readFileSync } from "node:fs";
import { join } from "node:path";
import { MemoryReferenceCache, referenceChecksum, type ReferenceCache, type ReferenceRecord } from "../studies/reference.js";
import { writeFileAtomic } from "./io.js";
import { userPath } from "./paths.js";

const FORMAT = "stepwell-reference-2";

/** Where reference runs are kept on disk: $STEPWELL_CACHE_DIR, else .stepwell-cache/ in the directory the command was started in. */
export function cacheDirectory(): string {
  return userPath(process.env.STEPWELL_CACHE_DIR || ".stepwell-cache");
}

/**
 * On-disk reference cache (with a small memory layer of its own, so that every command reads and checks the disk). An entry is used only if it is intact and was
 * written by this very solver: its format, key and solver identity (package version and source hash, see
 * `solverIdentity`) match and its checksum matches its content. Anything else — another version, a truncated
 * file, an edited one — is reported once through `warn` and recomputed (then overwritten). Entries are written
 * to a temporary file and renamed into place, so jobs sharing one directory never read half an entry.
 */
export class DiskReferenceCache implements ReferenceCache {
  constructor(
    readonly dir: string,
    readonly solver: string,
    private readonly warn: (message: string) => void,
    private readonly memory: ReferenceCache = new MemoryReferenceCache(2),
  ) {}

  file(key: string): string { return join(this.dir, `reference-${key}.json`); }

  get(key: string): ReferenceRecord | undefined {
    const m = this.memory.get(key);
    if (m) return m;
    const file = this.file(key);
    let text: string;
    try {
      text = readFileSync(file, "utf8");
    } catch (e) {
      if ((e as NodeJS.ErrnoException).code !== "ENOENT") this.warn(`reference cache: cannot read ${file} (${(e as Error).message}); recomputing it`);
      return undefined;
    }
    const r = this.decode(text, key);
    if (typeof r === "string") {
      this.warn(`reference cache: ${file} ${r}; recomputing it`);
      return undefined;
    }
    this.memory.set(key, r);
    return r;
  }

  /** The record a stored text holds, or why it cannot be used. */
  private decode(text: string, key: string): ReferenceRecord | string {
    let j: Record<string, unknown>;
    try {
      j = JSON.parse(text) as Record<string, unknown>;
    } catch {
      return "is truncated or not JSON";
    }
    if (!j || typeof j !== "object" || j.format !== FORMAT) return `is not a ${FORMAT} entry`;
    if (j.solver !== this.solver) return `was written by ${String(j.solver)}, this is ${this.solver}`;
    if (j.key !== key) return `holds another entry (key ${String(j.key)})`;
    const { format: _f, checksum, stateLength, state: text64, ...meta } = j;
    if (typeof text64 !== "string" || typeof checksum !== "string") return "lacks its state or checksum";
    const buf = Buffer.from(text64, "base64");
    if (buf.byteLength !== Number(stateLength) * 8) return `holds ${buf.byteLength / 8} of ${String(stateLength)} state values (truncated or edited)`;
    const state = new Float64Array(buf.byteLength / 8);
    new Uint8Array(state.buffer).set(buf);
    const record = { ...(meta as unknown as Omit<ReferenceRecord, "state">), state };
    if (referenceChecksum(record) !== checksum) return "does not match its checksum (edited or damaged)";
    return record;
  }

  set(key: string, record: ReferenceRecord): void {
    this.memory.set(key, record);
    const state = Buffer.from(record.state.buffer, record.state.byteOffset, record.state.byteLength).toString("base64");
    // the checksum covers the fields as they read back from JSON (a non-finite number becomes null)
    const { state: _s, ...meta } = JSON.parse(JSON.stringify({ ...record, state: null })) as ReferenceRecord;
    try {
      writeFileAtomic(this.file(key), JSON.stringify({ format: FORMAT, ...meta, checksum: referenceChecksum({ ...meta, state: record.state }), stateLength: record.state.length, state }));
    } catch (e) {
      this.warn(`reference cache: cannot write ${this.file(key)} (${(e as Error).message}); it will be computed again next time`);
    }
  }
}
