/** Further benchmark sections; each adds one key to the JSON result. */
export interface BenchSection {
  key: string;
  /** `argv`: the bench's arguments, for a section's own flags (documented in DEVELOPERS.md). */
  run(ctx: { log: (s: string) => void; quick: boolean; argv: readonly string[] }): Promise<unknown> | unknown;
}

import { demoSection, operatorSection, phiSection } from "./fastSteppers";
import { scalingSection } from "./scaling";
import { memorySection } from "./memory";
import { parallelSection } from "./parallel";
import { phiSharingSection } from "./phiSharing";
import { goalsSection } from "./goals";

export const EXTRA_SECTIONS: BenchSection[] = [operatorSection, phiSection, phiSharingSection, demoSection, scalingSection, memorySection, parallelSection, goalsSection];
