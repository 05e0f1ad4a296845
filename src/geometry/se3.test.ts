import { describe, expect, it } from 'vitest';
import { groupLaws, numericLeftJacobian } from '../testing/group-laws.js';
import { expectMatrixClose, numericJacobian, rng } from '../testing/numeric.js';
import {
  act,
  adjoint,
  boxMinus,
  boxPlus,
  compose,
  inverse,
  poseClone,
  poseFromArray12,
  poseIdentity,
  poseToArray12,
  se3Exp,
  se3LeftManifold,
  se3Log,
  type Pose,
} from './se3.js';
import type { Manifold } from '../solver/problem.js';
import { so3Exp, so3LeftJacobian } from './so3.js';

const flat = (T: Pose) => poseToArray12(T);

groupLaws<Pose>({
  name: 'SE(3)',
  dim: 6,
  exp: (d) => se3Exp(d),
  log: (T) => se3Log(T),
  compose: (a, b) => compose(a, b),
  inverse: (T) => inverse(T),
  adjoint: (T) => adjoint(T),
  boxPlus: (T, d) => boxPlus(T, d),
  boxMinus: (a, b) => boxMinus(a, b),
  flat,
  tangent: (w, rest) => Float64Array.from([w[0]!, w[1]!, w[2]!, ...rest]),
});

/** Identity, pure rotation, pure translation, large translation, rotation near π. */
function samplePoses(): Pose[] {
  const u = rng(11);
  const out: Pose[] = [poseIdentity(), { R: so3Exp([0.3, -1.1, 0.7]), t: new Float64Array(3) }, { R: so3Exp([0, 0, 0]), t: Float64Array.from([1, -2, 3]) }];
  out.push({ R: so3Exp([0.2, 0.1, -0.4]), t: Float64Array.from([120, -80, 45]) });
  out.push({ R: so3Exp([0, Math.PI - 1e-4, 0]), t: Float64Array.from([0.5, 0.2, -0.1]) });
  for (let k = 0; k < 10; k++) out.push({ R: so3Exp([4 * u() - 2, 4 * u() - 2, 4 * u() - 2]), t: Float64Array.from([10 * u() - 5, 10 * u() - 5, 10 * u() - 5]) });
  return out;
}

describe('SE(3) Jacobians vs central differences (left perturbation)', () => {
  const poses = samplePoses();

  it.each(poses.map((T, i) => [i, T] as const))('act: J_pa_T and J_pa_pb at pose %i', (_i, T) => {
    const p = Float64Array.from([0.4, -1.3, 2.2]);
    const J_pa_T = new Float64Array(18);
    const J_pa_pb = new Float64Array(9);
    act(T, p, undefined, J_pa_T, J_pa_pb);
    const numT = numericJacobian((X: Pose) => act(X, p), T, 6, (X, i, h) => {
      const d = new Float64Array(6);
      d[i] = h;
      return boxPlus(X, d);
    });
    const numP = numericJacobian((x: Float64Array) => act(T, x), p, 3, (x, i, h) => {
      const y = Float64Array.from(x);
      y[i]! += h;
      return y;
    });
    expectMatrixClose(J_pa_T, numT, { rel: 1e-6 }, 'J_pa_T');
    expectMatrixClose(J_pa_pb, numP, { rel: 1e-6 }, 'J_pa_pb');
  });

  it.each(poses.map((T, i) => [i, T] as const))('compose: J_Tac_Tab = I, J_Tac_Tbc = Ad(T_a_b) at pose %i', (i, T_a_b) => {
    const T_b_c = poses[(i + 5) % poses.length]!;
    const J1 = new Float64Array(36);
    const J2 = new Float64Array(36);
    compose(T_a_b, T_b_c, undefined, J1, J2);
    const num1 = numericLeftJacobian((X: Pose) => compose(X, T_b_c), T_a_b, 6, boxPlus, boxMinus);
    const num2 = numericLeftJacobian((X: Pose) => compose(T_a_b, X), T_b_c, 6, boxPlus, boxMinus);
    expectMatrixClose(J1, num1, { abs: 1e-7, rel: 1e-6 }, 'J_Tac_Tab');
    expectMatrixClose(J2, num2, { abs: 1e-7, rel: 1e-6 }, 'J_Tac_Tbc');
  });

  it.each(poses.map((T, i) => [i, T] as const))('inverse: J_Tba_Tab = −Ad(T⁻¹) at pose %i', (_i, T) => {
    const J = new Float64Array(36);
    inverse(T, undefined, J);
    const num = numericLeftJacobian((X: Pose) => inverse(X), T, 6, boxPlus, boxMinus);
    expectMatrixClose(J, num, { abs: 1e-7, rel: 1e-6 }, 'J_Tba_Tab');
  });
});

describe('SE(3) details', () => {
  it('exp puts J_l(ω)ρ in the translation', () => {
    const d = [0.4, -0.2, 1.1, 1, 2, -3];
    const T = se3Exp(d);
    const Jl = so3LeftJacobian(d.slice(0, 3));
    const t = [0, 1, 2].map((r) => Jl[r * 3]! * d[3]! + Jl[r * 3 + 1]! * d[4]! + Jl[r * 3 + 2]! * d[5]!);
    expectMatrixClose(T.t, t, { abs: 1e-15 }, 't');
  });

  it('compose and inverse accept out aliasing an input', () => {
    const a = { R: so3Exp([0.3, 0.2, 0.1]), t: Float64Array.from([1, 2, 3]) };
    const b = { R: so3Exp([-0.5, 0.7, 0.2]), t: Float64Array.from([-4, 0.5, 2]) };
    const ab = compose(a, b);
    const x = poseClone(a);
    compose(x, b, x);
    expectMatrixClose(flat(x), flat(ab), { abs: 1e-15 }, 'compose into a');
    const y = poseClone(b);
    compose(a, y, y);
    expectMatrixClose(flat(y), flat(ab), { abs: 1e-15 }, 'compose into b');
    const z = poseClone(a);
    inverse(z, z);
    expectMatrixClose(flat(z), flat(inverse(a)), { abs: 1e-15 }, 'inverse in place');
  });

  it('se3LeftManifold.plus equals boxPlus on 12-number storage, also in place', () => {
    const T = { R: so3Exp([1, -0.5, 0.25]), t: Float64Array.from([0.1, 0.2, 0.3]) };
    const d = Float64Array.from([0.01, 0.02, -0.03, 0.4, -0.5, 0.6]);
    const x = poseToArray12(T);
    // Compile-time check that the object fits the solver's Manifold interface.
    const m: Manifold = se3LeftManifold;
    expect([m.ambientSize, m.tangentSize]).toEqual([12, 6]);
    m.plus(x, d, x);
    expectMatrixClose(x, flat(boxPlus(T, d)), { abs: 1e-15 }, 'plus');
    expect(() => poseFromArray12([1, 2, 3])).toThrow(RangeError);
  });
});
