import { describe, expect, test } from 'vitest';
import { planarPose } from './planar.js';
import { se3Exp, act, boxMinus, type Pose } from '../geometry/se3.js';
import { gaussian, rng } from '../testing/numeric.js';

function board(cols: number, rows: number, sq: number): number[] {
  const xy: number[] = [];
  for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) xy.push(c * sq, r * sq);
  return xy;
}

function normalisedView(T: Pose, xy: number[]): number[] {
  const out: number[] = [];
  for (let i = 0; i < xy.length / 2; i++) {
    const p = act(T, [xy[2 * i]!, xy[2 * i + 1]!, 0]);
    out.push(p[0]! / p[2]!, p[1]! / p[2]!);
  }
  return out;
}

describe('planarPose', () => {
  test.each([
    ['frontal', [0, 0, 0, -0.2, -0.1, 1.0]],
    ['tilted 40°', [0.7, -0.3, 0.2, -0.1, 0.05, 0.8]],
    ['rotated in plane by ~180°', [0.1, 0.2, 3.0, 0.2, 0.1, 1.5]],
  ])('noise-free board (%s) → exact pose', (_n, d) => {
    const T = se3Exp(d);
    const xy = board(8, 6, 0.04);
    const r = planarPose(xy, normalisedView(T, xy));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const e = boxMinus(r.T_cam_plane, T);
    for (const v of e) expect(Math.abs(v)).toBeLessThan(1e-9);
  });

  test('noisy board → rotation within 0.5°, translation within 1 cm', () => {
    const T = se3Exp([0.4, 0.3, -0.1, 0.05, -0.1, 1.2]);
    const xy = board(9, 7, 0.05);
    const u = rng(5);
    // 0.5 px noise at a focal length of 800 px.
    const m = normalisedView(T, xy).map((x) => x + (0.5 / 800) * gaussian(u));
    const r = planarPose(xy, m);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    const e = boxMinus(r.T_cam_plane, T);
    expect(Math.hypot(e[0]!, e[1]!, e[2]!)).toBeLessThan((0.5 * Math.PI) / 180);
    expect(Math.hypot(r.T_cam_plane.t[0]! - T.t[0]!, r.T_cam_plane.t[1]! - T.t[1]!, r.T_cam_plane.t[2]! - T.t[2]!)).toBeLessThan(0.01);
  });

  test('collinear target points → status collinear', () => {
    const xy = [0, 0, 0.1, 0, 0.2, 0, 0.3, 0, 0.4, 0];
    const r = planarPose(xy, normalisedView(se3Exp([0, 0, 0, 0, 0, 1]), xy));
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toBe('collinear');
  });
});
