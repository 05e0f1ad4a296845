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

/*
 * How the engine applies a loss (IRLS-style scaling, chosen over the Triggs
 * correction): for every group g of `lossGroupSize` consecutive residuals of
 * a residual block, with s = ‖r_g‖², the engine evaluates ρ(s), ρ′(s) and
 *   - adds ½ ρ(s) to the cost,
 *   - scales the group's residuals and Jacobian rows by w = √ρ′(s):
 *       r̃_g = w r_g,  J̃_g = w J_g,
 *     so the gradient J̃ᵀr̃ = ρ′ J_gᵀ r_g is exact and the Gauss–Newton
 *     matrix J̃ᵀJ̃ = ρ′ J_gᵀJ_g drops the second-order term 2ρ″ J_gᵀ r_g r_gᵀ J_g.
 * ρ″ is therefore not used by the step; it is provided for callers and
 * checked in the tests. Dropping the ρ″ term keeps the normal matrix positive
 * semi-definite (the Triggs correction can make it indefinite for Cauchy).
 * A group with ρ′ ≤ 0 contributes nothing to the normal equations.
 */

/** ρ(s) = s, ρ′ = 1, ρ″ = 0: plain least squares. */
export const trivialLoss: LossFunction = Object.freeze({
  name: 'none',
  scale: Infinity,
  evaluate(s: number, rho: Float64Array): void {
    rho[0] = s;
    rho[1] = 1;
    rho[2] = 0;
  },
});

function checkScale(a: number, what: string): void {
  if (!(a > 0) || !Number.isFinite(a)) throw new RangeError(`${what}: scale a = ${a} violates 0 < a < ∞`);
}

/**
 * Huber loss with scale a (unit of ‖r‖), b = a²:
 *   ρ(s) = s                 for s ≤ b
 *   ρ(s) = 2a√s − b          for s > b
 *   ρ′(s) = 1 (s ≤ b),  a/√s (s > b)
 *   ρ″(s) = 0 (s ≤ b), −a/(2 s^{3/2}) (s > b)
 * Quadratic for ‖r‖ ≤ a, linear in ‖r‖ beyond; ρ and ρ′ are continuous at s = b.
 */
export function huberLoss(a: number): LossFunction {
  checkScale(a, 'huberLoss');
  const b = a * a;
  return Object.freeze({
    name: 'huber',
    scale: a,
    evaluate(s: number, rho: Float64Array): void {
      if (s <= b) {
        rho[0] = s;
        rho[1] = 1;
        rho[2] = 0;
      } else {
        const r = Math.sqrt(s);
        rho[0] = 2 * a * r - b;
        rho[1] = a / r;
        rho[2] = -rho[1]! / (2 * s);
      }
    },
  });
}

/**
 * Cauchy (Lorentzian) loss with scale a (unit of ‖r‖), b = a²:
 *   ρ(s) = b log(1 + s/b)
 *   ρ′(s) = 1 / (1 + s/b)
 *   ρ″(s) = −(1/b) / (1 + s/b)²
 * Behaves like s for s ≪ b and grows only logarithmically for large residuals.
 */
export function cauchyLoss(a: number): LossFunction {
  checkScale(a, 'cauchyLoss');
  const b = a * a;
  const c = 1 / b;
  return Object.freeze({
    name: 'cauchy',
    scale: a,
    evaluate(s: number, rho: Float64Array): void {
      const sum = 1 + s * c;
      const inv = 1 / sum;
      rho[0] = b * Math.log1p(s * c);
      rho[1] = inv;
      rho[2] = -c * inv * inv;
    },
  });
}
