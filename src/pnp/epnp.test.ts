import { describe, expect, test } from 'vitest';
import { epnp, procrustes } from './epnp.js';
import { se3Exp, act, boxMinus, type Pose } from '../geometry/se3.js';
import { gaussian, rng } from '../testing/numeric.js';

function cloud(n: number, seed: number, flat = false): Float64Array {
  const u = rng(seed);
  const p = new Float64Array(3 * n);
  for (let i = 0; i < 3 * n; i++) p[i] = i % 3 === 2 && flat ? 0 : u() - 0.5;
  return p;
}

function bearingsOf(T: Pose, p: Float64Array, noiseRad = 0, seed = 1): Float64Array {
  const u = rng(seed);
  const n = p.length / 3;
  const f = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) {
    const q = act(T, p.subarray(3 * i, 3 * i + 3));
    q[0]! += noiseRad * gaussian(u) * Math.hypot(...q);
    q[1]! += noiseRad * gaussian(u) * Math.hypot(...q);
    const l = Math.hypot(...q);
    f.set([q[0]! / l, q[1]! / l, q[2]! / l], 3 * i);
  }
  return f;
}

describe('epnp on bearings', () => {
  test.each([
    ['non-planar, 6 points', 6, false, [0.3, -0.2, 0.5, 0.1, -0.2, 3]],
    ['non-planar, 50 points', 50, false, [-1.0, 0.4, 2.0, 0.3, 0.2, 2.5]],
    ['planar, 20 points', 20, true, [0.6, 0.2, -0.4, 0, 0.1, 2]],
  ] as const)('noise-free %s → exact pose', (_n, n, flat, d) => {
    const p = cloud(n, n, flat);
    const T = se3Exp(d);
    const r = epnp(p, bearingsOf(T, p), flat);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    for (const v of boxMinus(r.T_cam_target, T)) expect(Math.abs(v)).toBeLessThan(1e-8);
  });

  test('fisheye-like bearings beyond 90° (points beside and behind the image plane)', () => {
    const p = cloud(30, 4);
    // Target beside the camera: z of the points ranges over negative and positive values.
    const T = se3Exp([0.2, 1.3, 0, 1.2, 0, -0.1]);
    const f = bearingsOf(T, p);
    let behind = 0;
    for (let i = 0; i < 30; i++) if (f[3 * i + 2]! < 0) behind++;
    expect(behind).toBeGreaterThan(0);
    const r = epnp(p, f, false);
    expect(r.ok).toBe(true);
    if (r.ok) for (const v of boxMinus(r.T_cam_target, T)) expect(Math.abs(v)).toBeLessThan(1e-8);
  });

  test('noisy bearings (1 mrad) → rotation within 1°, translation within 5 cm at 3 m', () => {
    const p = cloud(40, 8);
    const T = se3Exp([0.3, 0.1, -0.2, 0.1, 0, 3]);
    const r = epnp(p, bearingsOf(T, p, 1e-3, 2), false);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const e = boxMinus(r.T_cam_target, T);
    expect(Math.hypot(e[0]!, e[1]!, e[2]!)).toBeLessThan(Math.PI / 180);
    expect(Math.hypot(r.T_cam_target.t[0]! - T.t[0]!, r.T_cam_target.t[1]! - T.t[1]!, r.T_cam_target.t[2]! - T.t[2]!)).toBeLessThan(0.05);
  });

  test('bearings of a mirrored target (all points behind a perspective camera) → behind_camera', () => {
    const p = cloud(12, 6);
    const T = se3Exp([0.1, 0.2, 0.3, 0, 0, 3]);
    // The rays a pinhole would report for points behind it: x/z, y/z with z < 0 give bearings −q/|q|.
    const f = bearingsOf(T, p).map((x) => -x);
    const r = epnp(p, f, false);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toBe('behind_camera');
  });

  test('procrustes recovers a known rigid motion and flags reflections', () => {
    const p = cloud(10, 11);
    const T = se3Exp([0.5, -0.4, 0.3, 1, 2, 3]);
    const q = new Float64Array(30);
    for (let i = 0; i < 10; i++) q.set(act(T, p.subarray(3 * i, 3 * i + 3)), 3 * i);
    const a = procrustes(p, q, 10);
    expect(a.reflection).toBe(false);
    for (const v of boxMinus(a.pose, T)) expect(Math.abs(v)).toBeLessThan(1e-12);
    const mirrored = q.map((x, i) => (i % 3 === 0 ? -x : x));
    expect(procrustes(p, mirrored, 10).reflection).toBe(true);
  });

  test('fewer than 4 points → too_few_points', () => {
    const p = cloud(3, 1);
    const r = epnp(p, bearingsOf(se3Exp([0, 0, 0, 0, 0, 2]), p), false);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toBe('too_few_points');
  });
});
