#!/usr/bin/env node
// The `stepwell` command (`npx stepwell …` from any directory of a checkout, and `npm run stepwell -- …`): runs the
// command line from its TypeScript source through the tsx loader installed with the package, in this process, so
// that signals reach it directly. Relative paths are taken from the directory the command was started in.
import { register } from "tsx/esm/api";

register();
const { cliEntry } = await import("../solver/cli/main.ts");
await cliEntry(process.argv.slice(2));
