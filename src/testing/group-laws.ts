/**
 * One law suite for matrix Lie groups under the left-perturbation convention
 * of src/geometry/CONVENTIONS.md, run for SO(3) and SE(3) from their test files.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { compareMatrices, expectMatrixClose, numericJacobian } from './numeric.js';

export interface GroupUnderTest<G> {
  name: string;
  /** Tangent dimension; the first three tangent coordinates are the rotation vector. */
  dim: number;
  exp(delta: ArrayLike<number>): G;
  log(g: G): Float64Array;
  compose(a: G, b: G): G;
  inverse(g: G): G;
  /** Ad(g), dim x dim row-major, with g·exp(δ)·g⁻¹ = exp(Ad(g) δ). */
  adjoint(g: G): Float64Array;
  boxPlus(g: G, delta: ArrayLike<number>): G;
  boxMinus(a: G, b: G): Float64Array;
  /** All entries of the element, for comparisons. */
  flat(g: G): Float64Array;
  /** Tangent vector with the given rotation vector; other coordinates from `rest`. */
  tangent(rotvec: ArrayLike<number>, rest: readonly number[]): Float64Array;
}

const unit = fc.double({ min: -1, max: 1, noNaN: true });
/** A unit axis (falls back to x when the sampled vector is too short). */
export const axisArb = fc.tuple(unit, unit, unit).map(([x, y, z]) => {
  const n = Math.hypot(x, y, z);
  return n < 1e-3 ? [1, 0, 0] : [x / n, y / n, z / n];
});
const restArb = fc.array(fc.double({ min: -5, max: 5, noNaN: true }), { minLength: 3, maxLength: 3 });

function scaled(axis: readonly number[], angle: number): number[] {
  return [axis[0]! * angle, axis[1]! * angle, axis[2]! * angle];
}

/** Angles where exp/log switch branches or lose accuracy (radians), below π. */
export const SPECIAL_ANGLES = [0, 1e-12, 1e-8, 1e-5, 1e-4, 1.0001e-4, 1e-3, 0.5, 2, Math.PI - 1e-3, Math.PI - 1e-6, Math.PI - 1e-9];
/** Axes for the rotation-by-π cases: each coordinate axis and two oblique ones. */
export const PI_AXES = [
  [1, 0, 0],
  [0, 1, 0],
  [0, 0, 1],
  [1 / Math.sqrt(3), 1 / Math.sqrt(3), 1 / Math.sqrt(3)],
  [0.6, -0.8, 0],
];

export function groupLaws<G>(grp: GroupUnderTest<G>): void {
  const close = (a: G, b: G, what: string, tol = 1e-9) => expectMatrixClose(grp.flat(a), grp.flat(b), { abs: tol, rel: tol }, what);
  const elementArb = fc.tuple(axisArb, fc.double({ min: 0, max: Math.PI, noNaN: true }), restArb).map(([ax, th, rest]) => grp.exp(grp.tangent(scaled(ax, th), rest)));
  const tangentArb = (maxAngle: number) =>
    fc.tuple(axisArb, fc.double({ min: 0, max: maxAngle, noNaN: true }), restArb).map(([ax, th, rest]) => grp.tangent(scaled(ax, th), rest));

  describe(`${grp.name} group laws`, () => {
    it('log(exp(δ)) = δ for rotation angles in [0, π − 1e-6] (fast-check)', () => {
      fc.assert(
        fc.property(tangentArb(Math.PI - 1e-6), (d) => {
          expectMatrixClose(grp.log(grp.exp(d)), d, { abs: 1e-9, rel: 1e-9 }, 'log(exp(δ))');
        }),
        { numRuns: 500 },
      );
    });

    it.each(SPECIAL_ANGLES.flatMap((th) => PI_AXES.map((ax) => [th, ax] as const)))('log(exp(δ)) = δ at angle %d, axis %j', (th, ax) => {
      const d = grp.tangent(scaled(ax, th), [0.3, -1.2, 2.5]);
      const back = grp.log(grp.exp(d));
      // Rotation part: absolute accuracy ~1e-15·(condition), here at most 1e-9 even 1e-9 away from π.
      expectMatrixClose(back, d, { abs: 1e-9 }, 'log(exp(δ))');
      // Small angles must keep their relative accuracy (no Taylor-branch truncation error).
      if (th > 0 && th < 1e-3) {
        const err = Math.hypot(back[0]! - d[0]!, back[1]! - d[1]!, back[2]! - d[2]!);
        expect(err / th).toBeLessThan(1e-12);
      }
    });

    it.each(PI_AXES)('rotation by exactly π about %j: |log| = π and exp(log(g)) = g', (...ax) => {
      const d = grp.tangent(scaled(ax, Math.PI), [1, 2, 3]);
      const g = grp.exp(d);
      const w = grp.log(g);
      expect(Math.abs(Math.hypot(w[0]!, w[1]!, w[2]!) - Math.PI)).toBeLessThan(1e-12);
      // The rotation vector at π is ± the axis; either must map back to g.
      const sameAxis = Math.abs(Math.abs(w[0]! * ax[0]! + w[1]! * ax[1]! + w[2]! * ax[2]!) - Math.PI);
      expect(sameAxis).toBeLessThan(1e-9);
      close(grp.exp(w), g, 'exp(log(g))');
    });

    it('exp(log(g)) = g for any element (fast-check, angles up to π)', () => {
      fc.assert(fc.property(elementArb, (g) => close(grp.exp(grp.log(g)), g, 'exp(log(g))')), { numRuns: 300 });
    });

    it('g·g⁻¹ = g⁻¹·g = e and (a·b)⁻¹ = b⁻¹·a⁻¹ (fast-check)', () => {
      const e = grp.exp(new Float64Array(grp.dim));
      fc.assert(
        fc.property(elementArb, elementArb, (a, b) => {
          close(grp.compose(a, grp.inverse(a)), e, 'g·g⁻¹');
          close(grp.compose(grp.inverse(a), a), e, 'g⁻¹·g');
          close(grp.inverse(grp.compose(a, b)), grp.compose(grp.inverse(b), grp.inverse(a)), '(ab)⁻¹');
        }),
        { numRuns: 200 },
      );
    });

    it('adjoint identity exp(Ad(g)δ) = g·exp(δ)·g⁻¹ and exp(δ)·g = g·exp(Ad(g⁻¹)δ) (fast-check)', () => {
      fc.assert(
        fc.property(elementArb, tangentArb(3), (g, d) => {
          const Ad = grp.adjoint(g);
          const n = grp.dim;
          const Add = new Float64Array(n);
          for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) Add[i]! += Ad[i * n + j]! * d[j]!;
          close(grp.exp(Add), grp.compose(grp.compose(g, grp.exp(d)), grp.inverse(g)), 'exp(Ad(g)δ)');
          const AdInv = grp.adjoint(grp.inverse(g));
          const d2 = new Float64Array(n);
          for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) d2[i]! += AdInv[i * n + j]! * d[j]!;
          close(grp.compose(grp.exp(d), g), grp.compose(g, grp.exp(d2)), 'exp(δ)·g');
        }),
        { numRuns: 200 },
      );
    });

    it('boxPlus/boxMinus: (g ⊞ δ) ⊟ g = δ, b ⊞ (a ⊟ b) = a, g ⊞ δ = exp(δ)·g (fast-check)', () => {
      fc.assert(
        fc.property(elementArb, elementArb, tangentArb(Math.PI - 1e-3), (a, b, d) => {
          expectMatrixClose(grp.boxMinus(grp.boxPlus(a, d), a), d, { abs: 1e-9, rel: 1e-9 }, '(g⊞δ)⊟g');
          close(grp.boxPlus(b, grp.boxMinus(a, b)), a, 'b⊞(a⊟b)');
          close(grp.boxPlus(a, d), grp.compose(grp.exp(d), a), 'g⊞δ');
        }),
        { numRuns: 200 },
      );
    });

    it('the left Jacobian of log at e is I: ∂ log(exp(δ)) / ∂δ at 0 (finite differences)', () => {
      const J = numericJacobian((d: Float64Array) => grp.log(grp.exp(d)), new Float64Array(grp.dim), grp.dim, (x, i, h) => {
        const y = Float64Array.from(x);
        y[i]! += h;
        return y;
      });
      const I = new Float64Array(grp.dim * grp.dim);
      for (let i = 0; i < grp.dim; i++) I[i * grp.dim + i] = 1;
      expect(compareMatrices(J, I, { abs: 1e-8 }).pass).toBe(true);
    });
  });
}

/**
 * Central-difference Jacobian of a group-valued function with respect to a
 * left perturbation of its group argument: column i is
 * [F(exp(h e_i)·x) ⊟ F(x) − F(exp(−h e_i)·x) ⊟ F(x)] / 2h.
 */
export function numericLeftJacobian<G, H>(
  F: (x: G) => H,
  x: G,
  inDim: number,
  boxPlusIn: (g: G, d: ArrayLike<number>) => G,
  boxMinusOut: (a: H, b: H) => Float64Array,
  step = 1e-6,
): Float64Array {
  const F0 = F(x);
  return numericJacobian(
    (g: G) => boxMinusOut(F(g), F0),
    x,
    inDim,
    (g, i, h) => {
      const d = new Float64Array(inDim);
      d[i] = h;
      return boxPlusIn(g, d);
    },
    step,
  );
}
