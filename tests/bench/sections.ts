/** Further benchmark sections; each adds one key to the JSON result. */
export interface BenchSection {
  key: string;
  run(ctx: { log: (s: string) => void; quick: boolean }): Promise<unknown> | unknown;
}

import { demoSection, operatorSection, phiSection } from "./fastSteppers";
import { scalingSection } from "./scaling";
import { memorySection } from "./memory";
import { parallelSection } from "./parallel";
import { phiSharingSection } from "./phiSharing";

export const EXTRA_SECTIONS: BenchSection[] = [operatorSection, phiSection, phiSharingSection, demoSection, scalingSection, memorySection, parallelSection];
