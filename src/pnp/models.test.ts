/**
 * solvePnP and the refinement through the real camera models: pinhole,
 * Brown–Conrady and Kannala–Brandt (including fisheye rays beyond 90°).
 */
import { describe, expect, test } from 'vitest';
import { cameraModel, type CameraModelName } from '../camera/index.js';
import { act, boxMinus, boxPlus, se3Exp, type Pose } from '../geometry/se3.js';
import { so3Exp } from '../geometry/so3.js';
import { expectMatrixClose, gaussian, numericJacobian, rng } from '../testing/numeric.js';
import { solvePnP } from './index.js';
import { reprojectionResiduals } from './refine.js';

// Invented test intrinsics (formats.md parameter order).
const CAMERAS: [CameraModelName, number[]][] = [
  ['pinhole', [700, 705, 640.5, 400.5]],
  ['brown-conrady', [640, 642, 639.5, 399.5, -0.28, 0.07, 0.0008, -0.0005, -0.006]],
  ['kannala-brandt', [380, 381, 639.5, 399.5, 0.02, -0.005, 0.001, -0.0002]],
];

function view(name: CameraModelName, params: number[], points3d: Float64Array, T: Pose): Float64Array {
  const m = cameraModel(name);
  const n = points3d.length / 3;
  const pixels = new Float64Array(2 * n);
  const uv = new Float64Array(2);
  for (let i = 0; i < n; i++) {
    if (!m.project(params, act(T, points3d.subarray(3 * i, 3 * i + 3)), uv)) throw new Error(`scene point ${i} not projectable by ${name}`);
    pixels.set(uv, 2 * i);
  }
  return pixels;
}

function board(cols: number, rows: number, sq: number): Float64Array {
  const p = new Float64Array(3 * cols * rows);
  for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) p.set([c * sq, r * sq, 0], 3 * (r * cols + c));
  return p;
}

function cloud(n: number, seed: number): Float64Array {
  const u = rng(seed);
  return Float64Array.from({ length: 3 * n }, () => 0.6 * (u() - 0.5));
}

describe.each(CAMERAS)('%s', (name, params) => {
  const model = cameraModel(name);

  test.each([
    ['centre', [0.2, -0.3, 0.4, 0.05, -0.02, 2]],
    ['off-axis', [0.6, 0.2, -1.0, 0.6, 0.4, 1.5]],
  ])('refinement Jacobian J_r_T vs central differences (%s)', (_n, d) => {
    const p = cloud(8, 4);
    const T = se3Exp(d);
    const pixels = view(name, params, p, T);
    const n = 8;
    const res = new Float64Array(2 * n);
    const J = new Float64Array(12 * n);
    const T1 = boxPlus(T, [0.01, -0.02, 0.01, 0.02, 0.01, -0.03]);
    expect(reprojectionResiduals(model, params, T1, p, pixels, res, J)).toBe(-1);
    const Jn = numericJacobian((X: Pose) => {
      const r = new Float64Array(2 * n);
      reprojectionResiduals(model, params, X, p, pixels, r);
      return r;
    }, T1, 6, (X, i, h) => {
      const e = new Float64Array(6);
      e[i] = h;
      return boxPlus(X, e);
    });
    expectMatrixClose(J, Jn, { rel: 1e-6 }, `${name} J_r_T`);
  });

  test.each([
    ['board', () => board(9, 6, 0.05), [0.3, -0.4, 0.2, -0.2, -0.15, 0.9]],
    ['cloud', () => cloud(30, 9), [-0.2, 0.3, 0.5, 0.1, -0.05, 2.2]],
  ] as const)('noise-free %s → exact pose (1e-9)', (_k, make, d) => {
    const p = make();
    const T = se3Exp(d);
    const r = solvePnP(model, params, p, view(name, params, p, T));
    for (const v of boxMinus(r.T_cam_target, T)) expect(Math.abs(v)).toBeLessThan(1e-9);
    expect(r.converged).toBe(true);
  });

  test('noisy board (0.3 px) → rotation < 0.5°, translation < 1 cm', () => {
    const p = board(9, 6, 0.05);
    const T = se3Exp([0.3, -0.4, 0.2, -0.2, -0.15, 0.9]);
    const u = rng(12);
    const pixels = view(name, params, p, T).map((x) => x + 0.3 * gaussian(u));
    const r = solvePnP(model, params, p, pixels);
    const e = boxMinus(r.T_cam_target, T);
    expect(Math.hypot(e[0]!, e[1]!, e[2]!)).toBeLessThan((0.5 * Math.PI) / 180);
    expect(Math.hypot(r.T_cam_target.t[0]! - T.t[0]!, r.T_cam_target.t[1]! - T.t[1]!, r.T_cam_target.t[2]! - T.t[2]!)).toBeLessThan(0.01);
    expect(r.rmsPx).toBeLessThan(0.6);
  });
});

describe('kannala-brandt beyond 90°', () => {
  const params = CAMERAS[2]![1];
  const model = cameraModel('kannala-brandt');
  test.each([
    // R = exp([0, 1.45, 0]) turns the board's +x towards −z: its far half lies behind the image plane.
    ['planar board beside the camera', () => board(8, 6, 0.1), [0, 1.45, 0], [0.8, -0.25, 0.05]],
    ['cloud beside the camera', () => cloud(30, 17), [0.1, 1.6, 0.0], [1.0, 0.0, -0.05]],
  ] as const)('%s (some rays with z < 0) → exact pose', (_n, make, w, t) => {
    const p = make();
    const T: Pose = { R: so3Exp(w), t: Float64Array.from(t) };
    let behind = 0;
    for (let i = 0; i < p.length / 3; i++) if (act(T, p.subarray(3 * i, 3 * i + 3))[2]! < 0) behind++;
    expect(behind).toBeGreaterThan(0);
    const r = solvePnP(model, params, p, view('kannala-brandt', params, p, T));
    for (const v of boxMinus(r.T_cam_target, T)) expect(Math.abs(v)).toBeLessThan(1e-9);
  });
});
