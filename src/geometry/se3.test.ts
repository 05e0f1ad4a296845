import { describe, expect, it } from 'vitest';
import { groupLaws, numericLeftJacobian } from '../testing/group-laws.js';
import { expectMatrixClose, numericJacobian, rng } from '../testing/numeric.js';
import {
  act,
  adjoint,
  adjointCongruence,
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

describe('adjointCongruence', () => {
  it.each(samplePoses().map((T, i) => [i, T] as const))('equals the dense Ad(T)ᵀ A Ad(T), Ad(T)ᵀ b at pose %i', (_i, T) => {
    const u = rng(5);
    // A = JᵀJ of a random 9x6 Jacobian (symmetric, positive semi-definite, like the normal equations).
    const J = Array.from({ length: 54 }, () => 2 * u() - 1);
    const A = new Float64Array(36);
    for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) for (let r = 0; r < 9; r++) A[6 * i + j] += J[6 * r + i]! * J[6 * r + j]!;
    const b = Float64Array.from({ length: 6 }, () => 2 * u() - 1);
    const Ad = adjoint(T);
    const denseA = new Float64Array(36);
    const denseB = new Float64Array(6);
    for (let i = 0; i < 6; i++) {
      for (let k = 0; k < 6; k++) denseB[i] += Ad[6 * k + i]! * b[k]!;
      for (let j = 0; j < 6; j++) {
        let s = 0;
        for (let k = 0; k < 6; k++) for (let l = 0; l < 6; l++) s += Ad[6 * k + i]! * A[6 * k + l]! * Ad[6 * l + j]!;
        denseA[6 * i + j] = s;
      }
    }
    const outA = new Float64Array(36);
    const outB = new Float64Array(6);
    adjointCongruence(T, A, b, outA, outB);
    const scale = Math.max(1, ...denseA.map(Math.abs));
    for (let k = 0; k < 36; k++) expect(Math.abs(outA[k]! - denseA[k]!)).toBeLessThan(1e-12 * scale);
    for (let k = 0; k < 6; k++) expect(Math.abs(outB[k]! - denseB[k]!)).toBeLessThan(1e-12 * Math.max(1, ...denseB.map(Math.abs)));
    // Exactly symmetric, as the solver's scatter assumes.
    for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) expect(outA[6 * i + j]).toBe(outA[6 * j + i]);
  });
});
