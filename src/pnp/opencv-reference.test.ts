/**
 * External reference: OpenCV.js 4.12 (`@techstark/opencv-js`), `cv.solvePnP`
 * with SOLVEPNP_ITERATIVE (its Levenberg–Marquardt refinement of the
 * reprojection error) on noise-free Brown–Conrady data. Both solvers minimise
 * the same reprojection error through the same distortion model, so on exact
 * data they must agree with each other and with the ground truth.
 */
import { beforeAll, describe, expect, test } from 'vitest';
import { cameraModel } from '../camera/index.js';
import { act, se3Exp, type Pose } from '../geometry/se3.js';
import { rng } from '../testing/numeric.js';
import { loadOpenCv, OPENCV_LOAD_TIMEOUT_MS, type OpenCv } from '../testing/opencv.js';
import { solvePnP } from './index.js';

const model = cameraModel('brown-conrady');
// fx fy cx cy k1 k2 p1 p2 k3: a moderately distorted 1280x800 lens (invented test values).
const params = Float64Array.of(640, 642, 639.5, 399.5, -0.28, 0.07, 0.0008, -0.0005, -0.006);

function scene(kind: 'board' | 'cloud', T: Pose) {
  const u = rng(kind === 'board' ? 1 : 2);
  const pts: number[] = [];
  if (kind === 'board') {
    for (let r = 0; r < 7; r++) for (let c = 0; c < 10; c++) pts.push(c * 0.06, r * 0.06, 0);
  } else {
    for (let i = 0; i < 40; i++) pts.push(u() - 0.5, u() - 0.5, 0.6 * (u() - 0.5));
  }
  const points3d = Float64Array.from(pts);
  const n = points3d.length / 3;
  const pixels = new Float64Array(2 * n);
  const uv = new Float64Array(2);
  for (let i = 0; i < n; i++) {
    if (!model.project(params, act(T, points3d.subarray(3 * i, 3 * i + 3)), uv)) throw new Error('scene point not projectable');
    pixels.set(uv, 2 * i);
  }
  return { points3d, pixels, n };
}

/** cv.solvePnP (SOLVEPNP_ITERATIVE) → pose; all Mats are freed. */
function opencvPose(cv: OpenCv, points3d: Float64Array, pixels: Float64Array, n: number): Pose {
  const obj = cv.matFromArray(n, 3, cv.CV_64F, Array.from(points3d));
  const img = cv.matFromArray(n, 2, cv.CV_64F, Array.from(pixels));
  const K = cv.matFromArray(3, 3, cv.CV_64F, [params[0]!, 0, params[2]!, 0, params[1]!, params[3]!, 0, 0, 1]);
  // OpenCV's distortion order is k1 k2 p1 p2 k3, the same as formats.md.
  const D = cv.matFromArray(1, 5, cv.CV_64F, Array.from(params.subarray(4)));
  const rvec = new cv.Mat();
  const tvec = new cv.Mat();
  const Rm = new cv.Mat();
  try {
    if (!cv.solvePnP(obj, img, K, D, rvec, tvec, false, cv.SOLVEPNP_ITERATIVE)) throw new Error('cv.solvePnP failed');
    cv.Rodrigues(rvec, Rm);
    return { R: Float64Array.from(Rm.data64F as Float64Array), t: Float64Array.from(tvec.data64F as Float64Array) };
  } finally {
    for (const m of [obj, img, K, D, rvec, tvec, Rm]) m.delete();
  }
}

describe('solvePnP agrees with OpenCV.js cv.solvePnP on noise-free Brown–Conrady data', () => {
  let cv: OpenCv;
  beforeAll(async () => {
    ({ cv } = await loadOpenCv());
  }, OPENCV_LOAD_TIMEOUT_MS);

  test.each([
    ['board', [0.3, -0.4, 0.2, -0.2, -0.15, 0.9]],
    ['cloud', [-0.2, 0.3, 0.5, 0.1, -0.05, 2.2]],
  ] as const)('%s', (kind, d) => {
    const T = se3Exp(d);
    const { points3d, pixels, n } = scene(kind, T);
    const ours = solvePnP(model, params, points3d, pixels);
    const theirs = opencvPose(cv, points3d, pixels, n);
    let dR = 0, dt = 0, dRtruth = 0;
    for (let k = 0; k < 9; k++) {
      dR = Math.max(dR, Math.abs(ours.T_cam_target.R[k]! - theirs.R[k]!));
      dRtruth = Math.max(dRtruth, Math.abs(ours.T_cam_target.R[k]! - T.R[k]!));
    }
    for (let k = 0; k < 3; k++) dt = Math.max(dt, Math.abs(ours.T_cam_target.t[k]! - theirs.t[k]!));
    // eslint-disable-next-line no-console
    console.log(`${kind}: max|R_ours − R_opencv| ${dR.toExponential(2)}, max|t_ours − t_opencv| ${dt.toExponential(2)} m, max|R_ours − R_true| ${dRtruth.toExponential(2)}`);
    expect(dR).toBeLessThan(1e-6);
    expect(dt).toBeLessThan(1e-6);
    expect(dRtruth).toBeLessThan(1e-9);
  });
});
