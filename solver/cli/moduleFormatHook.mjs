// Resolve hook (node:module `register`) for user stepper modules, see modules.ts: a URL carrying the query
// "stepwell-module" is an ES module whatever the nearest package.json says, and so are the .ts/.js files it imports
// by relative path (they get the query too).
const MARK = "?stepwell-module";

export async function resolve(specifier, context, next) {
  const r = await next(specifier, context);
  const fromUser = typeof context.parentURL === "string" && context.parentURL.includes(MARK) && /^\.{1,2}\//.test(specifier);
  if (!r.url.startsWith("file:") || !(r.url.includes(MARK) || fromUser) || !/\.(ts|js)(\?|$)/.test(r.url)) return r;
  return { ...r, url: r.url.includes(MARK) ? r.url : r.url + MARK, format: "module" };
}
