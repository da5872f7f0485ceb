/**
 * Registry entries of the exponential methods: every table of expTables.ts under its own name, plus
 * "custom-exp" taking a user φ-table (option `phiTable`). Options: linear, backend, tolerance, substeps, filter.
 */
import type { MethodEntry } from "./registry.js";
import { EXP_TABLES, parseExpTable, type ExpRkTable } from "./expTables.js";
import { createExponentialStepper, EXPONENTIAL_OPTIONS } from "./exponential.js";

const LINEAR_HELP = 'linear "rest" | "modes:N" | "jacobian", backend krylov | taylor | chebyshev | substep | rational | dense';

function entry(t: ExpRkTable): MethodEntry {
  const rosenbrock = t.linearPart === "jacobian";
  return {
    name: t.name,
    family: rosenbrock ? "exponential-rosenbrock" : "exponential",
    order: t.order,
    description: `${t.reference}; ${t.b.length} tendency evaluation${t.b.length === 1 ? "" : "s"} per step; ` +
      `${rosenbrock ? "default linear: jacobian" : "default linear: rest"}; ${LINEAR_HELP}`,
    options: [...EXPONENTIAL_OPTIONS],
    create: ({ model, spec, field }) => createExponentialStepper(t, model, spec as Record<string, unknown>, field),
  };
}

export const EXPONENTIAL_METHODS: readonly MethodEntry[] = [
  ...EXP_TABLES.map(entry),
  {
    name: "custom-exp", family: "exponential", order: 1,
    description: 'any exponential Runge–Kutta method given as "phiTable": { "c": [...], "a": [[], [[{"k":1,"coef":…,"at":…}]], …], "b": [...], "order": p }; ' + LINEAR_HELP,
    options: [...EXPONENTIAL_OPTIONS, "phiTable"],
    create: ({ model, spec, field }) => {
      const raw = spec as Record<string, unknown>;
      const table = parseExpTable(raw.phiTable, `${field}.phiTable`);
      const { phiTable: _ignored, ...rest } = raw;
      return createExponentialStepper(table, model, rest, field, "custom-exp");
    },
  },
];
