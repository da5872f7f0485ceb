/**
 * Registry entries of the exponential methods: every table of expTables.ts under its own name, plus
 * "custom-exp" taking a user φ-table (option `phiTable`).
 */
import { SolverError } from "../errors.js";
import type { StepperDefinition } from "./interface.js";
import { EXP_TABLES, parseExpTable } from "./expTables.js";
import { createExponential, exponentialDefinition, linearOption, PHI_OPTIONS } from "./exponential.js";

export const EXPONENTIAL_METHODS: readonly StepperDefinition[] = [
  ...EXP_TABLES.map(exponentialDefinition),
  {
    name: "custom-exp", family: "exponential", order: 1,
    description: 'any exponential Runge–Kutta method given as "phiTable": { "c": [...], "a": [[], [[{"k":1,"coef":…,"at":…}]], …], "b": [...], "order": p }',
    options: {
      linear: linearOption(undefined),
      ...PHI_OPTIONS,
      phiTable: {
        type: "json", label: "φ-coefficient table (JSON)",
        help: 'the φ-coefficient table as { "c": [...], "a": [[], [[{"k":1,"coef":…,"at":…}]], …], "b": [...], "order": p }',
        parse: (v, field) => parseExpTable(v, field),
      },
    },
    create: (problem, o, ctx) => {
      const table = o.phiTable as ReturnType<typeof parseExpTable> | undefined;
      if (!table) throw new SolverError("bad-input", `${ctx.field}.phiTable: is required for method "custom-exp"`, `${ctx.field}.phiTable`);
      return createExponential(table, problem, o, ctx.field, "custom-exp");
    },
  },
];
