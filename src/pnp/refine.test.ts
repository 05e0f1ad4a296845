import { describe, expect, test } from 'vitest';
import { pinhole } from '../camera/index.js';
import { refinePose, reprojectionResiduals } from './refine.js';
import { se3Exp, act, boxMinus, boxPlus, type Pose } from '../geometry/se3.js';
import { expectMatrixClose, gaussian, numericJacobian, rng } from '../testing/numeric.js';
import { huberLoss } from '../solver/loss.js';

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
    expect(r.residualsPx.length).toBe(20);
    expect(r.residualsUvPx.length).toBe(40);
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

  test('with a Huber loss, three gross corners barely move the pose; least squares is pulled away', () => {
    const { p, T, uv } = scene(40, 9);
    const u = rng(2);
    const noisy = uv.map((x) => x + 0.3 * gaussian(u));
    for (const i of [3, 17, 28]) {
      noisy[2 * i] = noisy[2 * i]! + 40;
      noisy[2 * i + 1] = noisy[2 * i + 1]! - 25;
    }
    const start = boxPlus(T, [0.02, -0.02, 0.01, 0.02, 0.01, -0.03]);
    const ls = refinePose(pinhole, K, start, p, noisy);
    const robust = refinePose(pinhole, K, start, p, noisy, { loss: huberLoss(1) });
    expect(robust.converged).toBe(true);
    const angle = (X: Pose) => {
      const e = boxMinus(X, T);
      return Math.hypot(e[0]!, e[1]!, e[2]!);
    };
    expect(angle(robust.T_cam_target)).toBeLessThan(0.25 * angle(ls.T_cam_target));
    // The gross corners stand out in the robust fit's residuals (≥ 40 px), the others stay near the noise.
    for (const i of [3, 17, 28]) expect(robust.residualsPx[i]).toBeGreaterThan(40);
    const others = Array.from(robust.residualsPx).filter((_, i) => ![3, 17, 28].includes(i));
    expect(Math.max(...others)).toBeLessThan(2);
  });

  test('a Huber loss wider than every residual gives the least-squares pose', () => {
    const { p, T, uv } = scene(30, 10);
    const u = rng(3);
    const noisy = uv.map((x) => x + 0.5 * gaussian(u));
    const start = boxPlus(T, [0.01, 0.01, -0.01, 0.01, -0.01, 0.02]);
    const ls = refinePose(pinhole, K, start, p, noisy);
    const wide = refinePose(pinhole, K, start, p, noisy, { loss: huberLoss(100) });
    for (const v of boxMinus(wide.T_cam_target, ls.T_cam_target)) expect(Math.abs(v)).toBeLessThan(1e-12);
  });
});
