import { beforeAll, describe, expect, test } from 'vitest';
import { rng } from '../testing/numeric.js';
import { loadOpenCv, OPENCV_LOAD_TIMEOUT_MS, type OpenCv } from '../testing/opencv.js';
import { brownConrady, brownConradyMaxRadiusSquared, brownConradyUndistort } from './brown-conrady.js';
import { pinhole } from './pinhole.js';

describe('brown-conrady validity limit', () => {
  test('r²_max for k1 alone is −1/(3k1), the root of 1 + 3k1 r² (closed form); none for k1 ≥ 0', () => {
    expect(brownConradyMaxRadiusSquared(-0.28, 0, 0)).toBeCloseTo(1 / 0.84, 14);
    expect(brownConradyMaxRadiusSquared(0.1, 0, 0)).toBe(Infinity);
    expect(brownConradyMaxRadiusSquared(0, 0, 0)).toBe(Infinity);
    expect(brownConradyMaxRadiusSquared(NaN, 0, 0)).toBeNaN();
  });

  test('r²_max for (k1, k2) is the smaller root of 1 + 3k1 s + 5k2 s² (quadratic formula)', () => {
    const k1 = 0.1;
    const k2 = -0.02;
    const a = 5 * k2;
    const b = 3 * k1;
    const roots = [(-b + Math.sqrt(b * b - 4 * a)) / (2 * a), (-b - Math.sqrt(b * b - 4 * a)) / (2 * a)].filter((s) => s > 0);
    expect(brownConradyMaxRadiusSquared(k1, k2, 0)).toBeCloseTo(Math.min(...roots), 12);
  });

  test('a point far outside the field that the polynomial would fold into the image is invalid', () => {
    const params = Float64Array.from([900, 905, 639.5, 399.5, -0.28, 0.07, 0, 0, -0.01]);
    const uv = new Float64Array(2);
    // x = 2.2 is past the turning point r ≈ 1.58: unchecked, x_d = 2.2·radial(2.2) ≈ 0.27 → u ≈ 880 px, inside the image.
    const x = 2.2;
    const r2 = x * x;
    const xd = x * (1 - 0.28 * r2 + 0.07 * r2 * r2 - 0.01 * r2 ** 3);
    expect(900 * xd + 639.5).toBeGreaterThan(0);
    expect(900 * xd + 639.5).toBeLessThan(1279);
    expect(brownConrady.project(params, [x, 0, 1], uv)).toBe(false);
    expect(brownConrady.project(params, [1.5, 0, 1], uv)).toBe(true);
  });

  test('undistortion rejects distorted radii beyond the fold and converges inside', () => {
    const out = new Float64Array(2);
    const k = [-0.28, 0.07, 0.0012, -0.0008, -0.01] as const;
    expect(brownConradyUndistort(...k, 0.95, 0, out)).toBe(false);
    expect(brownConradyUndistort(...k, 0.7, 0.3, out)).toBe(true);
    expect(out[0]! * out[0]! + out[1]! * out[1]!).toBeLessThan(brownConradyMaxRadiusSquared(-0.28, 0.07, -0.01));
  });

  test('with zero distortion it is the pinhole model', () => {
    const bc = Float64Array.from([700, 710, 320, 240, 0, 0, 0, 0, 0]);
    const ph = bc.subarray(0, 4);
    const a = new Float64Array(2);
    const b = new Float64Array(2);
    const Ja = new Float64Array(6);
    const Jb = new Float64Array(6);
    for (const p of [
      [0.1, -0.3, 2],
      [0, 0, 1],
      [-1, 2, 0.5],
    ]) {
      expect(brownConrady.project(bc, p, a, Ja)).toBe(true);
      expect(pinhole.project(ph, p, b, Jb)).toBe(true);
      expect(Array.from(a)).toEqual(Array.from(b));
      expect(Array.from(Ja)).toEqual(Array.from(Jb));
    }
  });
});

describe('brown-conrady and pinhole against OpenCV 4.12 cv.projectPoints', () => {
  let cv: OpenCv;
  beforeAll(async () => {
    ({ cv } = await loadOpenCv());
  }, OPENCV_LOAD_TIMEOUT_MS);

  const cases: { label: string; params: number[] }[] = [
    { label: 'barrel', params: [900, 905, 639.5, 399.5, -0.28, 0.07, 0.0012, -0.0008, -0.01] },
    { label: 'pincushion', params: [600, 598, 641.0, 398.0, 0.1, -0.02, 0.0005, 0.0007, 0] },
    { label: 'pinhole (zero distortion)', params: [600, 610, 639.5, 399.5, 0, 0, 0, 0, 0] },
  ];

  test.each(cases)('$label: pixels and Jacobians agree to 1e-9 relative', ({ params }) => {
    const u = rng(21);
    const pts: number[] = [0, 0, 2.1];
    while (pts.length < 3 * 200) {
      const z = 0.3 + 8 * u();
      pts.push(z * (1.2 * u() - 0.6), z * (1.0 * u() - 0.5), z);
    }
    const N = pts.length / 3;
    const obj = cv.matFromArray(N, 1, cv.CV_64FC3, pts);
    const rvec = cv.matFromArray(3, 1, cv.CV_64F, [0, 0, 0]);
    const tvec = cv.matFromArray(3, 1, cv.CV_64F, [0, 0, 0]);
    const K = cv.matFromArray(3, 3, cv.CV_64F, [params[0]!, 0, params[2]!, 0, params[1]!, params[3]!, 0, 0, 1]);
    const D = cv.matFromArray(5, 1, cv.CV_64F, params.slice(4));
    const img = new cv.Mat();
    const jac = new cv.Mat();
    try {
      // OpenCV 4.12 (opencv.js, @techstark/opencv-js 4.12.0-release.1): cv::projectPoints with distCoeffs
      // [k1 k2 p1 p2 k3]; jacobian 2N x 15 with columns [rvec(3) tvec(3) fx fy cx cy k1 k2 p1 p2 k3].
      cv.projectPoints(obj, rvec, tvec, K, D, img, jac);
      const ref = img.data64F;
      const J = jac.data64F;
      expect(jac.cols).toBe(15);
      const uv = new Float64Array(2);
      const J_uv_p = new Float64Array(6);
      const J_uv_intr = new Float64Array(18);
      for (let i = 0; i < N; i++) {
        const p = pts.slice(3 * i, 3 * i + 3);
        expect(brownConrady.project(params, p, uv, J_uv_p, J_uv_intr)).toBe(true);
        const scale = Math.max(Math.abs(ref[2 * i]!), Math.abs(ref[2 * i + 1]!));
        expect(Math.abs(uv[0]! - ref[2 * i]!)).toBeLessThan(1e-9 * scale);
        expect(Math.abs(uv[1]! - ref[2 * i + 1]!)).toBeLessThan(1e-9 * scale);
        for (let r = 0; r < 2; r++) {
          const row = J.subarray((2 * i + r) * 15, (2 * i + r + 1) * 15);
          // With rvec = 0 and tvec = 0, ∂uv/∂tvec is ∂uv/∂p_cam.
          const ours = [...J_uv_p.subarray(3 * r, 3 * r + 3), ...J_uv_intr.subarray(9 * r, 9 * r + 9)];
          const theirs = [...row.subarray(3, 15)];
          const jscale = Math.max(...theirs.map(Math.abs));
          for (let c = 0; c < ours.length; c++) {
            expect(Math.abs(ours[c]! - theirs[c]!), `point ${i} row ${r} column ${c}`).toBeLessThan(1e-9 * jscale);
          }
        }
      }
    } finally {
      for (const m of [obj, rvec, tvec, K, D, img, jac]) m.delete();
    }
  });
});
