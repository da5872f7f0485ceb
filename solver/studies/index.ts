/** Studies on top of the run driver: stability limits, reference runs, convergence and work-precision sweeps, sharding. Pure: no I/O, no clock of its own. */
export * from "./common.js";
export * from "./hash.js";
export * from "./metrics.js";
export * from "./orders.js";
export * from "./reference.js";
export * from "./shard.js";
export * from "./stability.js";
export * from "./sweep.js";
export * from "./methodList.js";
export * from "./statistics.js";
