import { describe, expect, test } from 'vitest';
import { numericJacobian, expectMatrixClose, rng, gaussian } from '../testing/numeric.js';
import { se3Exp, poseToArray12, se3LeftManifold, type Pose } from '../geometry/se3.js';
import { PriorResidual } from './prior.js';

describe('PriorResidual', () => {
  const u = rng(5);
  const randomPose = (scale: number): Pose => se3Exp(Array.from({ length: 6 }, () => scale * gaussian(u)));
  test.each([0, 1, 2, 3, 4])('analytic Jacobian matches central differences (left perturbation), case %i', (k) => {
    const design = randomPose(0.8);
    const T = k === 0 ? design : randomPose(0.8 + 0.3 * k);
    const block = new PriorResidual(0, design, 0.01, 0.004);
    const x = poseToArray12(T);
    const J = new Float64Array(36);
    block.evaluate([x], new Float64Array(6), J);
    const f = (xx: Float64Array) => {
      const r = new Float64Array(6);
      block.evaluate([xx], r, null);
      return r;
    };
    const Jn = numericJacobian(f, x, 6, (xx, i, h) => {
      const d = new Float64Array(6);
      d[i] = h;
      const out = new Float64Array(12);
      se3LeftManifold.plus(xx, d, out);
      return out;
    });
    expectMatrixClose(J, Jn, { rel: 1e-6 }, 'J_r_T');
  });

  test('zero at the design, and the distance in sigmas', () => {
    const design = randomPose(0.5);
    const block = new PriorResidual(0, design, 0.01, 0.002);
    expect(block.sigmasFromDesign(poseToArray12(design))).toBeCloseTo(0, 12);
    const moved = { R: design.R, t: Float64Array.from([design.t[0]! + 0.004, design.t[1]!, design.t[2]!]) };
    expect(block.sigmasFromDesign(poseToArray12(moved))).toBeCloseTo(2, 10);
  });
});
