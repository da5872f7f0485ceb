/**
 * A user's stepper module in a worker: the page hands over its JavaScript (types already stripped); it is imported
 * from a Blob URL and its default export registered under `key` ("editor:<name>"), so that every spec naming the
 * key is built like a built-in. The Blob URL is the origin that fault messages locate places in.
 */
import { registerModule } from "../solver/time/userModules.js";
import type { StepperDefinition } from "../solver/time/interface.js";

/** The Blob URL the code is imported from (made first, so that a fault while importing can be located too). */
export const moduleUrl = (code: string): string => URL.createObjectURL(new Blob([code], { type: "text/javascript" }));

export async function importUserModule(key: string, origin: string): Promise<StepperDefinition> {
  const mod = (await import(/* @vite-ignore */ origin)) as { default?: unknown };
  return registerModule(key, mod.default, origin);
}
