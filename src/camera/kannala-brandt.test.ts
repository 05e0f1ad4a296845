import { beforeAll, describe, expect, test } from 'vitest';
import { loadOpenCv, OPENCV_LOAD_TIMEOUT_MS, type OpenCv } from '../testing/opencv.js';
import { rng } from '../testing/numeric.js';
import {
  kannalaBrandt,
  kannalaBrandtAxisSeries,
  kannalaBrandtMaxTheta,
  kannalaBrandtSolveTheta,
  kannalaBrandtThetaD,
} from './kannala-brandt.js';

const WIDE = Float64Array.from([300, 302, 639.5, 399.5, 0.02, -0.003, 0.0005, -3e-5]);

describe('kannala-brandt validity limit', () => {
  test('θ_max for k1 alone is √(−1/(3k1)), the root of 1 + 3k1 θ² (closed form)', () => {
    for (const k1 of [-0.1, -0.2, -0.5]) {
      expect(kannalaBrandtMaxTheta(k1, 0, 0, 0)).toBeCloseTo(Math.sqrt(-1 / (3 * k1)), 14);
    }
  });

  test('θ_max for k2 alone is (−1/(5k2))^¼ (closed form)', () => {
    expect(kannalaBrandtMaxTheta(0, -0.05, 0, 0)).toBeCloseTo((1 / 0.25) ** 0.25, 14);
  });

  test('θ_max is capped at π when the mapping never turns before π', () => {
    expect(kannalaBrandtMaxTheta(0, 0, 0, 0)).toBe(Math.PI);
    expect(kannalaBrandtMaxTheta(0.02, -0.003, 0.0005, -3e-5)).toBe(Math.PI);
    // Turning just beyond π: 1 + 3k1 θ² = 0 at θ = 3.2.
    expect(kannalaBrandtMaxTheta(-1 / (3 * 3.2 * 3.2), 0, 0, 0)).toBe(Math.PI);
  });

  test('θ_d is increasing below θ_max and not beyond it', () => {
    const k = [0.05, -0.01, 0.002, -0.0003] as const;
    const tmax = kannalaBrandtMaxTheta(...k);
    expect(tmax).toBeLessThan(Math.PI);
    const d = (t: number): number => (kannalaBrandtThetaD(...k, t + 1e-7) - kannalaBrandtThetaD(...k, t - 1e-7)) / 2e-7;
    expect(d(tmax * 0.999)).toBeGreaterThan(0);
    expect(d(tmax * 1.001)).toBeLessThan(0);
  });

  test('points beyond θ_max do not project, even though the polynomial would put them inside the image', () => {
    const params = Float64Array.from([300, 300, 639.5, 399.5, -0.1, 0, 0, 0]);
    const tmax = kannalaBrandtMaxTheta(-0.1, 0, 0, 0);
    const uv = new Float64Array(2);
    const theta = tmax + 0.3;
    const p = [Math.sin(theta), 0, Math.cos(theta)];
    // Unchecked, θ_d(θ) = θ − 0.1 θ³ would fold this point back to u ≈ 893 px, inside the 1280 px image.
    expect(300 * kannalaBrandtThetaD(-0.1, 0, 0, 0, theta) + 639.5).toBeLessThan(1279);
    expect(kannalaBrandt.project(params, p, uv)).toBe(false);
    expect(kannalaBrandt.project(params, [Math.sin(tmax * 0.99), 0, Math.cos(tmax * 0.99)], uv)).toBe(true);
  });

  test('pixels beyond θ_d(θ_max) do not unproject', () => {
    const params = Float64Array.from([300, 300, 639.5, 399.5, -0.1, 0, 0, 0]);
    const tmax = kannalaBrandtMaxTheta(-0.1, 0, 0, 0);
    const tdmax = kannalaBrandtThetaD(-0.1, 0, 0, 0, tmax);
    const ray = new Float64Array(3);
    expect(kannalaBrandt.unproject(params, [639.5 + 300 * tdmax * 1.001, 399.5], ray)).toBe(false);
    expect(kannalaBrandt.unproject(params, [639.5 + 300 * tdmax * 0.999, 399.5], ray)).toBe(true);
    expect(Math.acos(ray[2]!)).toBeLessThan(tmax);
  });
});

describe('kannala-brandt near and beyond the optical axis', () => {
  test('on the axis the projection is the principal point and J_uv_p = [[fx/Z, 0, 0], [0, fy/Z, 0]] (limit θ_d/r → 1/Z)', () => {
    const uv = new Float64Array(2);
    const J = new Float64Array(6);
    const Ji = new Float64Array(16);
    expect(kannalaBrandt.project(WIDE, [0, 0, 2], uv, J, Ji)).toBe(true);
    expect(Array.from(uv)).toEqual([639.5, 399.5]);
    // + 0 folds −0 into 0 (toEqual tells the two apart).
    expect(Array.from(J, (v) => v + 0)).toEqual([150, 0, 0, 0, 151, 0]);
    expect(Array.from(Ji, (v) => v + 0)).toEqual([0, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 1, 0, 0, 0, 0]);
  });

  test('the axis series of ρ³A agrees with the closed form (θ_d′ cos θ − θ_d/sin θ)/sin² θ to O(θ⁴)', () => {
    const k1 = 0.05;
    const k2 = -0.01;
    const k3 = 0.002;
    const k4 = -0.0003;
    for (const th of [1e-2, 3e-3, 1e-3]) {
      const t2 = th * th;
      const td = kannalaBrandtThetaD(k1, k2, k3, k4, th);
      const tdp = 1 + 3 * k1 * t2 + 5 * k2 * t2 * t2 + 7 * k3 * t2 ** 3 + 9 * k4 * t2 ** 4;
      const exact = (tdp * Math.cos(th) - td / Math.sin(th)) / Math.sin(th) ** 2;
      // Truncation O(θ⁴) plus the cancellation of the closed form (≈ ε/θ²).
      expect(Math.abs(kannalaBrandtAxisSeries(k1, k2, t2) - exact)).toBeLessThan(0.1 * t2 * t2 + 1e-15 / t2);
    }
  });

  test('θ > 90° (Z < 0) projects outside the 90° circle, continuously through Z = 0', () => {
    const uv = new Float64Array(2);
    const radii: number[] = [];
    for (const deg of [80, 89.999, 90, 90.001, 100, 140, 170]) {
      const th = (deg * Math.PI) / 180;
      expect(kannalaBrandt.project(WIDE, [Math.sin(th), 0, Math.cos(th)], uv)).toBe(true);
      radii.push((uv[0]! - 639.5) / 300);
    }
    for (let i = 1; i < radii.length; i++) expect(radii[i]!).toBeGreaterThan(radii[i - 1]!);
    expect(radii[2]).toBeCloseTo(kannalaBrandtThetaD(0.02, -0.003, 0.0005, -3e-5, Math.PI / 2), 13);
  });

  test('solveTheta inverts θ_d on [0, θ_max) and rejects values outside', () => {
    const k = [0.02, -0.003, 0.0005, -3e-5] as const;
    const u = rng(5);
    for (let i = 0; i < 200; i++) {
      const th = 0.999 * Math.PI * u();
      const got = kannalaBrandtSolveTheta(...k, kannalaBrandtThetaD(...k, th));
      expect(Math.abs(got - th)).toBeLessThan(1e-13);
    }
    expect(kannalaBrandtSolveTheta(...k, 0)).toBe(0);
    expect(kannalaBrandtSolveTheta(...k, -1e-3)).toBeNaN();
    expect(kannalaBrandtSolveTheta(...k, kannalaBrandtThetaD(...k, Math.PI))).toBeNaN();
    expect(kannalaBrandtSolveTheta(...k, NaN)).toBeNaN();
  });
});

describe('kannala-brandt against OpenCV 4.12 cv.fisheye_projectPoints', () => {
  let cv: OpenCv;
  beforeAll(async () => {
    ({ cv } = await loadOpenCv());
  }, OPENCV_LOAD_TIMEOUT_MS);

  const cases: { label: string; params: number[] }[] = [
    { label: 'wide', params: Array.from(WIDE) },
    { label: 'mild', params: [380, 381, 640.5, 511.5, -0.02, 0.004, -0.0006, 3e-5] },
    { label: 'strong coefficients', params: [420, 415, 630.25, 377.75, 0.08, -0.04, 0.01, -0.002] },
  ];

  test.each(cases)('$label: pixels and Jacobians agree to 1e-9 relative', ({ params }) => {
    // Points in front of the camera (OpenCV's fisheye model divides by Z first, so it covers θ < 90° only).
    const u = rng(11);
    const pts: number[] = [0, 0, 1.7];
    while (pts.length < 3 * 200) {
      const th = 1.5 * u();
      const ph = 2 * Math.PI * u();
      const rho = 0.3 + 8 * u();
      pts.push(rho * Math.sin(th) * Math.cos(ph), rho * Math.sin(th) * Math.sin(ph), rho * Math.cos(th));
    }
    const N = pts.length / 3;
    const obj = cv.matFromArray(N, 1, cv.CV_64FC3, pts);
    const rvec = cv.matFromArray(3, 1, cv.CV_64F, [0, 0, 0]);
    const tvec = cv.matFromArray(3, 1, cv.CV_64F, [0, 0, 0]);
    const K = cv.matFromArray(3, 3, cv.CV_64F, [params[0]!, 0, params[2]!, 0, params[1]!, params[3]!, 0, 0, 1]);
    const D = cv.matFromArray(4, 1, cv.CV_64F, params.slice(4));
    const img = new cv.Mat();
    const jac = new cv.Mat();
    try {
      // OpenCV 4.12 (opencv.js, @techstark/opencv-js 4.12.0-release.1): cv::fisheye::projectPoints,
      // jacobian 2N x 15 with columns [fx fy cx cy k1 k2 k3 k4 rvec(3) tvec(3) alpha].
      cv.fisheye_projectPoints(obj, img, rvec, tvec, K, D, 0, jac);
      const ref = img.data64F;
      const J = jac.data64F;
      expect(ref.length).toBe(2 * N);
      expect(jac.cols).toBe(15);
      const uv = new Float64Array(2);
      const J_uv_p = new Float64Array(6);
      const J_uv_intr = new Float64Array(16);
      for (let i = 0; i < N; i++) {
        const p = pts.slice(3 * i, 3 * i + 3);
        expect(kannalaBrandt.project(params, p, uv, J_uv_p, J_uv_intr)).toBe(true);
        const scale = Math.max(Math.abs(ref[2 * i]!), Math.abs(ref[2 * i + 1]!));
        expect(Math.abs(uv[0]! - ref[2 * i]!)).toBeLessThan(1e-9 * scale);
        expect(Math.abs(uv[1]! - ref[2 * i + 1]!)).toBeLessThan(1e-9 * scale);
        for (let r = 0; r < 2; r++) {
          const row = J.subarray((2 * i + r) * 15, (2 * i + r + 1) * 15);
          // With rvec = 0 and tvec = 0, ∂uv/∂tvec is ∂uv/∂p_cam.
          const ours = [...J_uv_intr.subarray(8 * r, 8 * r + 8), ...J_uv_p.subarray(3 * r, 3 * r + 3)];
          const theirs = [...row.subarray(0, 8), ...row.subarray(11, 14)];
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
