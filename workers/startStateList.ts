/**
 * Built-in scenarios that start from a state shipped with the app: scenario name → a Stepwell NetCDF run file
 * under public/ (its last record is the start; see startState.ts). No solver import: the page reads this list.
 */
export const START_STATES: Readonly<Record<string, string>> = {
  "eddying-jets": "states/eddying-jets-day20.json",
};
