/**
 * Share links: the scenario (with its stepper) as base64url-encoded JSON in the URL hash, followed by a
 * 32-bit FNV-1a checksum of the JSON text so that a cut or edited link is recognised instead of half-loaded.
 *   #setup=<base64url(JSON)>.<checksum as 8 hex digits>
 */
const PREFIX = "setup=";

/** FNV-1a over UTF-16 code units (Fowler, Noll and Vo; constants from the published FNV description). */
export function fnv1a(text: string): string {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h.toString(16).padStart(8, "0");
}

function toBase64Url(text: string): string {
  const bytes = new TextEncoder().encode(text);
  let bin = "";
  for (let i = 0; i < bytes.length; i++) bin += String.fromCharCode(bytes[i]);
  return btoa(bin).replace(/\+/g, "-").replace(/\//g, "_").replace(/=+$/, "");
}

function fromBase64Url(s: string): string {
  const b64 = s.replace(/-/g, "+").replace(/_/g, "/");
  const bin = atob(b64 + "===".slice((b64.length + 3) % 4));
  const bytes = Uint8Array.from(bin, (c) => c.charCodeAt(0));
  return new TextDecoder("utf-8", { fatal: true }).decode(bytes);
}

export function encodeSetup(scenario: unknown): string {
  const json = JSON.stringify(scenario);
  return `${PREFIX}${toBase64Url(json)}.${fnv1a(json)}`;
}

export type DecodedSetup = { kind: "none" } | { kind: "ok"; scenario: unknown } | { kind: "broken"; reason: string };

/** Read a location hash (with or without the leading #). */
export function decodeSetup(hash: string): DecodedSetup {
  const h = hash.replace(/^#/, "");
  if (!h) return { kind: "none" };
  if (!h.startsWith(PREFIX)) return { kind: "broken", reason: "the link does not hold a Stepwell setup" };
  const body = h.slice(PREFIX.length);
  const dot = body.lastIndexOf(".");
  if (dot < 0) return { kind: "broken", reason: "the link is incomplete (its checksum is missing)" };
  let json: string;
  try {
    json = fromBase64Url(body.slice(0, dot));
  } catch {
    return { kind: "broken", reason: "the link is damaged (it is not valid base64url text)" };
  }
  if (fnv1a(json) !== body.slice(dot + 1).toLowerCase()) {
    return { kind: "broken", reason: "the link was changed or cut short (its checksum does not match)" };
  }
  try {
    return { kind: "ok", scenario: JSON.parse(json) };
  } catch {
    return { kind: "broken", reason: "the link does not hold valid JSON" };
  }
}
