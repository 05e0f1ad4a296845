import fs from 'node:fs';
import path from 'node:path';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { mat3Mul, mat3Transpose, skew } from '../linalg/small.js';
import { axisArb, groupLaws, numericLeftJacobian, PI_AXES, SPECIAL_ANGLES } from '../testing/group-laws.js';
import { expectMatrixClose, numericJacobian, rng } from '../testing/numeric.js';
import { referenceDataDir } from '../testing/paths.js';
import { inverse, poseToMatrix4 } from './index.js';
import { poseFromMatrix4 } from './rotation.js';
import { nearestRotation, so3Act, so3Angle, so3Exp, so3LeftJacobian, so3LeftJacobianInverse, so3Log, so3Vee } from './so3.js';

const so3 = {
  name: 'SO(3)',
  dim: 3,
  exp: (d: ArrayLike<number>) => so3Exp(d),
  log: (R: Float64Array) => so3Log(R),
  compose: (a: Float64Array, b: Float64Array) => mat3Mul(new Float64Array(9), a, b),
  inverse: (R: Float64Array) => mat3Transpose(new Float64Array(9), R),
  adjoint: (R: Float64Array) => Float64Array.from(R),
  boxPlus: (R: Float64Array, d: ArrayLike<number>) => mat3Mul(new Float64Array(9), so3Exp(d), R),
  boxMinus: (a: Float64Array, b: Float64Array) => so3Log(mat3Mul(new Float64Array(9), a, mat3Transpose(new Float64Array(9), b))),
  flat: (R: Float64Array) => R,
  tangent: (w: ArrayLike<number>) => Float64Array.from(w),
};

groupLaws(so3);

const boxPlusR = so3.boxPlus;
const boxMinusR = so3.boxMinus;

describe('SO(3) Jacobians', () => {
  const cases = SPECIAL_ANGLES.flatMap((th) => PI_AXES.map((ax) => [th, ax] as const));

  it.each(cases)('left Jacobian J_l at angle %d, axis %j matches log(exp(ω+h)·exp(ω)ᵀ)/h', (th, ax) => {
    const w = ax.map((a) => a * th);
    const num = numericJacobian(
      (x: Float64Array) => boxMinusR(so3Exp(x), so3Exp(w)),
      Float64Array.from(w),
      3,
      (x, i, h) => {
        const y = Float64Array.from(x);
        y[i]! += h;
        return y;
      },
    );
    expectMatrixClose(so3LeftJacobian(w), num, { abs: 1e-8, rel: 1e-7 }, 'J_l');
  });

  it.each(cases.filter(([th]) => th < Math.PI - 1e-2))('inverse left Jacobian at angle %d, axis %j matches ∂log(exp(δ)·exp(ω))/∂δ', (th, ax) => {
    const w = ax.map((a) => a * th);
    const num = numericLeftJacobian((R: Float64Array) => so3Log(R), so3Exp(w), 3, boxPlusR, (a, b) => Float64Array.from(a, (x, i) => x - b[i]!));
    expectMatrixClose(so3LeftJacobianInverse(w), num, { abs: 1e-8, rel: 1e-7 }, 'J_l⁻¹');
  });

  it('J_l(ω)·J_l⁻¹(ω) = I for angles in [0, π] (fast-check)', () => {
    fc.assert(
      fc.property(axisArb, fc.double({ min: 0, max: Math.PI, noNaN: true }), (ax, th) => {
        const w = ax.map((a) => a * th);
        const P = mat3Mul(new Float64Array(9), so3LeftJacobian(w), so3LeftJacobianInverse(w));
        expectMatrixClose(P, [1, 0, 0, 0, 1, 0, 0, 0, 1], { abs: 1e-12 }, 'J_l·J_l⁻¹');
      }),
      { numRuns: 500 },
    );
  });

  it('so3Act Jacobians match central differences (left perturbation), relative error < 1e-6', () => {
    const u = rng(7);
    for (let k = 0; k < 50; k++) {
      const R = so3Exp([3 * u() - 1.5, 3 * u() - 1.5, 3 * u() - 1.5]);
      const p = Float64Array.from([10 * u() - 5, 10 * u() - 5, 10 * u() - 5]);
      const J_q_R = new Float64Array(9);
      const J_q_p = new Float64Array(9);
      so3Act(R, p, undefined, J_q_R, J_q_p);
      const numR = numericJacobian((X: Float64Array) => so3Act(X, p), R, 3, (X, i, h) => {
        const d = [0, 0, 0];
        d[i] = h;
        return boxPlusR(X, d);
      });
      const numP = numericJacobian((x: Float64Array) => so3Act(R, x), p, 3, (x, i, h) => {
        const y = Float64Array.from(x);
        y[i]! += h;
        return y;
      });
      expectMatrixClose(J_q_R, numR, { rel: 1e-6 }, 'J_q_R');
      expectMatrixClose(J_q_p, numP, { rel: 1e-6 }, 'J_q_p');
    }
  });
});

describe('SO(3) against Modern Robotics examples', () => {
  // Source: docstring examples of the Modern Robotics code library (K. M. Lynch, F. C. Park,
  // "Modern Robotics", Cambridge University Press 2017; NxRLab/ModernRobotics core.py),
  // copied to shared/reference-data/rotations/modern-robotics-so3-examples.json.
  const ref = JSON.parse(fs.readFileSync(path.join(referenceDataDir(), 'rotations', 'modern-robotics-so3-examples.json'), 'utf8'));
  const ex = ref.examples;
  const flat = (m: number[][]) => Float64Array.from(m.flat());

  it('VecToso3 / so3ToVec: skew and vee', () => {
    expectMatrixClose(skew(new Float64Array(9), ex.VecToso3.input.omg), flat(ex.VecToso3.output), { abs: 0 }, 'VecToso3');
    expectMatrixClose(so3Vee(flat(ex.so3ToVec.input.so3mat)), ex.so3ToVec.output, { abs: 0 }, 'so3ToVec');
  });

  it('AxisAng3: axis and angle of a rotation vector', () => {
    const w = ex.AxisAng3.input.expc3 as number[];
    const [axis, theta] = ex.AxisAng3.output as [number[], number];
    const th = Math.hypot(...w);
    expect(Math.abs(th - theta)).toBeLessThan(1e-15);
    expectMatrixClose(w.map((x) => x / th), axis, { abs: 1e-8 }, 'AxisAng3 axis');
  });

  it('MatrixExp3: Rodrigues formula for ω = (1, 2, 3) (angle √14 > π)', () => {
    const w = so3Vee(flat(ex.MatrixExp3.input.so3mat));
    expectMatrixClose(so3Exp(w), flat(ex.MatrixExp3.output), { abs: 1e-8 }, 'MatrixExp3');
    // Our log returns the equivalent vector of angle 2π − √14 along −ω (derived, see the JSON's note).
    const back = so3Log(flat(ex.MatrixExp3.output));
    const th = 2 * Math.PI - Math.sqrt(14);
    expectMatrixClose(back, Array.from(w, (x) => (-x / Math.sqrt(14)) * th), { abs: 1e-7 }, 'log of MatrixExp3 output');
  });

  it('MatrixLog3: rotation by 2π/3 about (1,1,1)/√3', () => {
    const w = so3Log(flat(ex.MatrixLog3.input.R));
    expectMatrixClose(skew(new Float64Array(9), w), flat(ex.MatrixLog3.output), { abs: 1e-8 }, 'MatrixLog3');
    expect(Math.abs(so3Angle(flat(ex.MatrixLog3.input.R)) - (2 * Math.PI) / 3)).toBeLessThan(1e-14);
  });

  it('RotInv and TransInv', () => {
    expectMatrixClose(mat3Transpose(new Float64Array(9), flat(ex.RotInv.input.R)), flat(ex.RotInv.output), { abs: 0 }, 'RotInv');
    const Tinv = poseToMatrix4(inverse(poseFromMatrix4(flat(ex.TransInv.input.T))));
    expectMatrixClose(Tinv, flat(ex.TransInv.output), { abs: 1e-15 }, 'TransInv');
  });
});

describe('nearestRotation', () => {
  it('recovers R from a perturbed R and returns a proper rotation for a reflection-like input', () => {
    const u = rng(3);
    for (let k = 0; k < 20; k++) {
      const R = so3Exp([u() * 4 - 2, u() * 4 - 2, u() * 4 - 2]);
      const M = Float64Array.from(R, (x) => 2 * x);
      expectMatrixClose(nearestRotation(M), R, { abs: 1e-12 }, 'nearestRotation(2R)');
    }
    const Q = nearestRotation([1, 0, 0, 0, 1, 0, 0, 0, -1]);
    const det = Q[0]! * (Q[4]! * Q[8]! - Q[5]! * Q[7]!) - Q[1]! * (Q[3]! * Q[8]! - Q[5]! * Q[6]!) + Q[2]! * (Q[3]! * Q[7]! - Q[4]! * Q[6]!);
    expect(Math.abs(det - 1)).toBeLessThan(1e-12);
  });
});
