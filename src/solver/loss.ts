/**
 * Robust loss functions ρ(s) of the squared residual norm s = ‖r‖².
 * Each returns ρ(s) and fills rho[1] = ρ′(s), rho[2] = ρ″(s).
 * Implemented by the solver module; this file fixes the interface.
 */
export interface LossFunction {
  readonly name: 'none' | 'huber' | 'cauchy' | string;
  /** Scale a (same unit as ‖r‖): the residual norm where the loss departs from quadratic. */
  readonly scale: number;
  /** rho[0] = ρ(s), rho[1] = ρ′(s), rho[2] = ρ″(s). */
  evaluate(s: number, rho: Float64Array): void;
}
