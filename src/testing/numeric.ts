/**
 * Test helpers: central-difference Jacobians and a matrix closeness check
 * that reports the worst entry.
 */

/**
 * Central-difference Jacobian of f: R^n → R^m at x, row-major m x n.
 * `perturb(x, i, h)` returns the point at which to evaluate for a step h
 * along coordinate i (defaults to x + h e_i); pass a manifold update such
 * as `boxPlus(T, h e_i)` to differentiate on the left of a pose.
 */
export function numericJacobian<X>(
  f: (x: X) => ArrayLike<number>,
  x: X,
  n: number,
  perturb: (x: X, i: number, h: number) => X,
  step = 1e-6,
): Float64Array {
  const f0 = f(x);
  const m = f0.length;
  const J = new Float64Array(m * n);
  for (let i = 0; i < n; i++) {
    const fp = f(perturb(x, i, step));
    const fm = f(perturb(x, i, -step));
    for (let r = 0; r < m; r++) J[r * n + i] = (fp[r]! - fm[r]!) / (2 * step);
  }
  return J;
}

/** Euclidean perturbation x + h e_i for plain arrays. */
export function perturbVector(x: ArrayLike<number>, i: number, h: number): Float64Array {
  const y = Float64Array.from(x);
  y[i]! += h;
  return y;
}

export interface CloseResult {
  pass: boolean;
  worstIndex: number;
  actual: number;
  expected: number;
  error: number;
}

/**
 * Compares entrywise with |a − e| ≤ abs + rel·max(|e|, scale), where scale is
 * the largest |e| in the matrix (so tiny entries of a large Jacobian are
 * judged relative to the matrix, not to themselves).
 */
export function compareMatrices(actual: ArrayLike<number>, expected: ArrayLike<number>, tol: { abs?: number; rel?: number }): CloseResult {
  const abs = tol.abs ?? 0;
  const rel = tol.rel ?? 0;
  let scale = 0;
  for (let i = 0; i < expected.length; i++) scale = Math.max(scale, Math.abs(expected[i]!));
  let worst = -1;
  let worstExcess = -Infinity;
  for (let i = 0; i < expected.length; i++) {
    const err = Math.abs(actual[i]! - expected[i]!);
    const allowed = abs + rel * scale;
    const excess = Number.isFinite(err) ? err - allowed : Infinity;
    if (excess > worstExcess) {
      worstExcess = excess;
      worst = i;
    }
  }
  return {
    pass: actual.length === expected.length && worstExcess <= 0,
    worstIndex: worst,
    actual: actual[worst]!,
    expected: expected[worst]!,
    error: Math.abs(actual[worst]! - expected[worst]!),
  };
}

/** Throws with the worst entry when the matrices differ beyond tolerance. */
export function expectMatrixClose(actual: ArrayLike<number>, expected: ArrayLike<number>, tol: { abs?: number; rel?: number }, what = 'matrix'): void {
  if (actual.length !== expected.length) throw new Error(`${what}: length ${actual.length} != expected ${expected.length}`);
  const r = compareMatrices(actual, expected, tol);
  if (!r.pass) {
    throw new Error(
      `${what}: entry ${r.worstIndex} is ${r.actual}, expected ${r.expected} (error ${r.error.toExponential(3)}, tolerance abs ${tol.abs ?? 0} rel ${tol.rel ?? 0})`,
    );
  }
}

export { rng, gaussian } from '../util/random.js';
