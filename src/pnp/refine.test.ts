import { describe, expect, test } from 'vitest';
import type { CameraModel } from '../camera/model.js';
import { refinePose, reprojectionResiduals } from './refine.js';
import { se3Exp, act, boxMinus, boxPlus, type Pose } from '../geometry/se3.js';
import { expectMatrixClose, gaussian, numericJacobian, rng } from '../testing/numeric.js';

/**
 * Test-local pinhole model, u = fx X/Z + cx, v = fy Y/Z + cy (valid for Z > 0),
 * with its analytic J_uv_p = [[fx/Z, 0, −fx X/Z²], [0, fy/Z, −fy Y/Z²]].
 */
const pinhole: CameraModel = {
  name: 'pinhole',
  paramNames: ['fx', 'fy', 'cx', 'cy'],
  numParams: 4,
  numDistortion: 0,
  project(k, p, uv, J_uv_p) {
    const z = p[2]!;
    if (!(z > 1e-12)) return false;
    uv[0] = (k[0]! * p[0]!) / z + k[2]!;
    uv[1] = (k[1]! * p[1]!) / z + k[3]!;
    if (J_uv_p) J_uv_p.set([k[0]! / z, 0, (-k[0]! * p[0]!) / (z * z), 0, k[1]! / z, (-k[1]! * p[1]!) / (z * z)]);
    return true;
  },
  unproject(k, uv, ray) {
    const x = (uv[0]! - k[2]!) / k[0]!, y = (uv[1]! - k[3]!) / k[1]!;
    const l = Math.hypot(x, y, 1);
    ray.set([x / l, y / l, 1 / l]);
    return true;
  },
  unprojectToPlane(k, uv, out2) {
    out2[0] = (uv[0]! - k[2]!) / k[0]!;
    out2[1] = (uv[1]! - k[3]!) / k[1]!;
    return true;
  },
};
const K = [800, 790, 320.5, 240.5];

function scene(n: number, seed: number) {
  const u = rng(seed);
  const p = new Float64Array(3 * n);
  for (let i = 0; i < 3 * n; i++) p[i] = 0.6 * (u() - 0.5);
  const T = se3Exp([0.2, -0.3, 0.4, 0.05, -0.02, 2]);
  const uv = new Float64Array(2 * n);
  const q = new Float64Array(2);
  for (let i = 0; i < n; i++) {
    pinhole.project(K, act(T, p.subarray(3 * i, 3 * i + 3)), q);
    uv.set(q, 2 * i);
  }
  return { p, T, uv };
}

describe('reprojectionResiduals', () => {
  test.each([
    ['near identity', [0, 0, 0, 0, 0, 1.5]],
    ['general', [0.4, -0.6, 1.2, 0.3, -0.2, 2.5]],
    ['large in-plane rotation', [0.05, 0.1, 2.8, -0.4, 0.3, 4]],
  ])('analytic J_r_T matches central differences (%s)', (_n, d) => {
    const { p, uv } = scene(7, 3);
    const T = se3Exp(d);
    const n = 7;
    const res = new Float64Array(2 * n);
    const J = new Float64Array(2 * n * 6);
    expect(reprojectionResiduals(pinhole, K, T, p, uv, res, J)).toBe(-1);
    const f = (X: Pose) => {
      const r = new Float64Array(2 * n);
      reprojectionResiduals(pinhole, K, X, p, uv, r);
      return r;
    };
    const Jn = numericJacobian(f, T, 6, (X, i, h) => {
      const e = new Float64Array(6);
      e[i] = h;
      return boxPlus(X, e);
    }, 1e-6);
    expectMatrixClose(J, Jn, { rel: 1e-6 }, 'J_r_T');
  });

  test('reports the first point the model cannot project', () => {
    const { p, uv } = scene(5, 4);
    const T = se3Exp([0, 0, 0, 0, 0, 0.1]); // the target (±0.3 m) straddles z = 0
    const r = reprojectionResiduals(pinhole, K, T, p, uv, new Float64Array(10));
    expect(r).toBeGreaterThanOrEqual(0);
  });
});

describe('refinePose', () => {
  test('noise-free: converges to the exact pose from a perturbed start', () => {
    const { p, T, uv } = scene(20, 7);
    const T0 = boxPlus(T, [0.05, -0.04, 0.03, 0.05, 0.05, -0.1]);
    const r = refinePose(pinhole, K, T0, p, uv);
    expect(r.converged).toBe(true);
    expect(r.status).toBe('converged');
    for (const v of boxMinus(r.T_cam_target, T)) expect(Math.abs(v)).toBeLessThan(1e-9);
    expect(r.rmsPx).toBeLessThan(1e-8);
    expect(r.residualsPx.length).toBe(40);
    expect(r.iterations).toBeGreaterThan(0);
  });

  test('noisy (0.5 px): RMS near the noise level, pose near the truth', () => {
    const { p, T, uv } = scene(60, 8);
    const u = rng(1);
    const noisy = uv.map((x) => x + 0.5 * gaussian(u));
    const r = refinePose(pinhole, K, boxPlus(T, [0.02, 0.02, 0.02, 0.02, 0.02, 0.02]), p, noisy);
    expect(r.converged).toBe(true);
    // RMS of the 2D error norm for σ = 0.5 px per axis is ≈ 0.5·√2·√((2n−6)/2n).
    expect(r.rmsPx).toBeGreaterThan(0.5);
    expect(r.rmsPx).toBeLessThan(0.9);
    const e = boxMinus(r.T_cam_target, T);
    expect(Math.hypot(e[0]!, e[1]!, e[2]!)).toBeLessThan(0.005);
  });

  test('a start with a point behind the camera → status invalid_point', () => {
    const { p, uv } = scene(5, 4);
    const r = refinePose(pinhole, K, se3Exp([0, 0, 0, 0, 0, 0.1]), p, uv);
    expect(r.status).toBe('invalid_point');
    expect(r.converged).toBe(false);
  });
});
