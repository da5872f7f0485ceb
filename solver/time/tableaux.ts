/** Explicit Runge–Kutta methods as Butcher tableaux (data, driven by one engine in explicitRk.ts). */
export interface ButcherTableau {
  readonly name: string;
  readonly order: number;
  readonly reference: string;
  readonly c: readonly number[];
  /** Strictly lower triangle: a[i] has i entries. */
  readonly a: readonly (readonly number[])[];
  readonly b: readonly number[];
}

export const RK4: ButcherTableau = {
  name: "rk4",
  order: 4,
  reference: "Kutta (1901), the classical fourth-order method",
  c: [0, 1 / 2, 1 / 2, 1],
  a: [[], [1 / 2], [0, 1 / 2], [0, 0, 1]],
  b: [1 / 6, 1 / 3, 1 / 3, 1 / 6],
};

/** Three-stage strong-stability-preserving method (Shu & Osher 1988; Gottlieb, Shu & Tadmor 2001). */
export const SSPRK3: ButcherTableau = {
  name: "ssprk3",
  order: 3,
  reference: "Shu & Osher (1988), J. Comput. Phys. 77, 439–471",
  c: [0, 1, 1 / 2],
  a: [[], [1], [1 / 4, 1 / 4]],
  b: [1 / 6, 1 / 6, 2 / 3],
};

export const EXPLICIT_TABLEAUX: readonly ButcherTableau[] = [RK4, SSPRK3];
