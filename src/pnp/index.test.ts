import { describe, expect, test } from 'vitest';
import type { CameraModel } from '../camera/model.js';
import { PnpError, solvePnP } from './index.js';
import { RigCalError } from '../errors.js';
import { se3Exp, act, boxMinus, type Pose } from '../geometry/se3.js';
import { gaussian, rng } from '../testing/numeric.js';

/** Test-local pinhole model (u = fx X/Z + cx, v = fy Y/Z + cy, valid for Z > 0). */
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

function project(T: Pose, p: Float64Array): Float64Array {
  const n = p.length / 3;
  const uv = new Float64Array(2 * n);
  const q = new Float64Array(2);
  for (let i = 0; i < n; i++) {
    if (!pinhole.project(K, act(T, p.subarray(3 * i, 3 * i + 3)), q)) throw new Error('test scene puts a point behind the camera');
    uv.set(q, 2 * i);
  }
  return uv;
}

function board(cols: number, rows: number, sq: number): Float64Array {
  const p = new Float64Array(3 * cols * rows);
  for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) p.set([c * sq, r * sq, 0], 3 * (r * cols + c));
  return p;
}

function cloud(n: number, seed: number, zSpread = 1): Float64Array {
  const u = rng(seed);
  const p = new Float64Array(3 * n);
  for (let i = 0; i < 3 * n; i++) p[i] = (i % 3 === 2 ? zSpread : 1) * 0.5 * (u() - 0.5);
  return p;
}

function expectPoseClose(A: Pose, B: Pose, tol: number) {
  for (const v of boxMinus(A, B)) expect(Math.abs(v)).toBeLessThan(tol);
}

function expectPnpError(f: () => unknown, code: string) {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(PnpError);
    expect(e).toBeInstanceOf(RigCalError);
    expect((e as PnpError).code).toBe(code);
    expect((e as PnpError).message.length).toBeGreaterThan(20);
    return;
  }
  throw new Error(`expected PnpError ${code}, nothing was thrown`);
}

describe('solvePnP, noise-free', () => {
  test.each([
    ['frontal board', [0, 0, 0, -0.15, -0.1, 0.8]],
    ['steep board', [1.0, 0.2, 0.3, -0.1, -0.1, 0.9]],
    ['board upside down', [0.2, -0.1, 3.0, 0.15, 0.1, 1.2]],
  ])('planar %s → exact pose (1e-9)', (_n, d) => {
    const p = board(9, 6, 0.03);
    const T = se3Exp(d);
    const r = solvePnP(pinhole, K, p, project(T, p));
    expectPoseClose(r.T_cam_target, T, 1e-9);
    expect(r.rmsPx).toBeLessThan(1e-7);
    expect(r.converged).toBe(true);
  });

  test('planar target not in z = 0 of its own frame (a tilted, shifted plane) → exact pose', () => {
    const T_t_b = se3Exp([0.3, 0.5, -0.2, 0.1, 0.2, 0.3]);
    const b = board(7, 5, 0.04);
    const p = new Float64Array(b.length);
    for (let i = 0; i < b.length / 3; i++) p.set(act(T_t_b, b.subarray(3 * i, 3 * i + 3)), 3 * i);
    const T = se3Exp([0.1, -0.2, 0.1, -0.3, -0.2, 1.5]);
    const r = solvePnP(pinhole, K, p, project(T, p));
    expectPoseClose(r.T_cam_target, T, 1e-9);
  });

  test.each([
    ['6 points', 6, 11],
    ['20 points', 20, 12],
    ['200 points', 200, 13],
  ])('non-planar %s → exact pose (1e-9), method epnp', (_n, n, seed) => {
    const p = cloud(n, seed);
    const T = se3Exp([0.5, -0.3, 0.8, 0.1, 0.05, 2]);
    const r = solvePnP(pinhole, K, p, project(T, p));
    expectPoseClose(r.T_cam_target, T, 1e-9);
    expect(r.method).toBe('epnp');
  });

  test('nearly planar set (σ3/σ1 ≈ 1e-2) → exact pose', () => {
    const p = cloud(30, 21, 0.01);
    const T = se3Exp([0.2, 0.3, -0.4, 0.1, 0.0, 1.2]);
    const r = solvePnP(pinhole, K, p, project(T, p));
    expectPoseClose(r.T_cam_target, T, 1e-9);
  });
});

describe('solvePnP, noisy', () => {
  test.each([
    ['board', board(10, 7, 0.03), [0.4, -0.3, 0.1, -0.12, -0.1, 0.9]],
    ['cloud', cloud(40, 5), [0.4, -0.3, 0.1, 0.0, 0.0, 2]],
  ] as const)('%s with 0.5 px noise → rotation < 1°, translation < 1 cm, RMS ≈ noise', (_n, p, d) => {
    // A small board's tilt is weakly observed: 0.5° error at 0.5 px noise is the optimum
    // itself here (refining from the true pose reaches the same minimum), not a solver failure.
    const T = se3Exp(d);
    const u = rng(77);
    const uv = project(T, p).map((x) => x + 0.5 * gaussian(u));
    const r = solvePnP(pinhole, K, p, uv);
    const e = boxMinus(r.T_cam_target, T);
    expect(Math.hypot(e[0]!, e[1]!, e[2]!)).toBeLessThan(Math.PI / 180);
    expect(Math.hypot(r.T_cam_target.t[0]! - T.t[0]!, r.T_cam_target.t[1]! - T.t[1]!, r.T_cam_target.t[2]! - T.t[2]!)).toBeLessThan(0.01);
    expect(r.rmsPx).toBeGreaterThan(0.4);
    expect(r.rmsPx).toBeLessThan(0.9);
    expect(r.residualsPx.length).toBe(uv.length);
  });
});

describe('solvePnP, typed errors', () => {
  const T = se3Exp([0.1, 0.2, 0.3, 0, 0, 2]);
  test('3 points → pnp.too_few_points', () => {
    const p = cloud(3, 1);
    expectPnpError(() => solvePnP(pinhole, K, p, project(T, p)), 'pnp.too_few_points');
  });
  test('collinear points → pnp.collinear', () => {
    const p = new Float64Array(18);
    for (let i = 0; i < 6; i++) p.set([0.1 * i, 0.05 * i, -0.02 * i], 3 * i);
    expectPnpError(() => solvePnP(pinhole, K, p, project(T, p)), 'pnp.collinear');
  });
  test('NaN pixel → pnp.non_finite', () => {
    const p = cloud(8, 2);
    const uv = project(T, p);
    uv[5] = NaN;
    expectPnpError(() => solvePnP(pinhole, K, p, uv), 'pnp.non_finite');
  });
  test('NaN point → pnp.non_finite', () => {
    const p = cloud(8, 2);
    const uv = project(T, p);
    p[4] = Infinity;
    expectPnpError(() => solvePnP(pinhole, K, p, uv), 'pnp.non_finite');
  });
  test('mismatched sizes → pnp.size_mismatch', () => {
    const p = cloud(8, 2);
    expectPnpError(() => solvePnP(pinhole, K, p, project(T, p).subarray(0, 14)), 'pnp.size_mismatch');
  });
  test('all points behind the camera (pixels from x/z, y/z with z < 0) → pnp.behind_camera', () => {
    const p = cloud(15, 3);
    const Tb = se3Exp([0.1, 0.2, 0.3, 0, 0, -2]);
    const uv = new Float64Array(30);
    for (let i = 0; i < 15; i++) {
      const q = act(Tb, p.subarray(3 * i, 3 * i + 3));
      expect(q[2]!).toBeLessThan(0);
      uv.set([K[0]! * (q[0]! / q[2]!) + K[2]!, K[1]! * (q[1]! / q[2]!) + K[3]!], 2 * i);
    }
    expectPnpError(() => solvePnP(pinhole, K, p, uv), 'pnp.behind_camera');
  });
  test('pixel outside the model\'s valid region → pnp.unprojectable', () => {
    const bounded: CameraModel = {
      ...pinhole,
      unproject: (k, uv, ray) => uv[0]! >= 0 && uv[0]! < 640 && pinhole.unproject(k, uv, ray),
    };
    const p = cloud(8, 2);
    const uv = project(T, p);
    uv[6] = -50;
    expectPnpError(() => solvePnP(bounded, K, p, uv), 'pnp.unprojectable');
  });
  test('maxRmsPx bound → pnp.poor_fit when exceeded', () => {
    const p = cloud(20, 9);
    const u = rng(3);
    const uv = project(T, p).map((x) => x + 5 * gaussian(u));
    expect(solvePnP(pinhole, K, p, uv).rmsPx).toBeGreaterThan(2);
    expectPnpError(() => solvePnP(pinhole, K, p, uv, { maxRmsPx: 2 }), 'pnp.poor_fit');
  });
});
