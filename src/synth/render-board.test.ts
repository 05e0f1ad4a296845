import { describe, expect, test } from 'vitest';
import { distortNormalised, projectBoardPoint, renderBoard, undistortNormalised } from './render-board.js';
import { so3Exp } from '../geometry/so3.js';

describe('render-board', () => {
  const d = [-0.28, 0.07, 0.0012, -0.0008, 0.01];

  test('distortion follows the Brown–Conrady formula of formats.md', () => {
    const x = 0.31, y = -0.22;
    const r2 = x * x + y * y;
    const radial = 1 + d[0]! * r2 + d[1]! * r2 * r2 + d[4]! * r2 * r2 * r2;
    // formats.md: x_d = x·radial + 2 p1 x y + p2 (r² + 2x²), y_d = y·radial + p1 (r² + 2y²) + 2 p2 x y.
    const xd = x * radial + 2 * d[2]! * x * y + d[3]! * (r2 + 2 * x * x);
    const yd = y * radial + d[2]! * (r2 + 2 * y * y) + 2 * d[3]! * x * y;
    const out = distortNormalised(x, y, d, new Float64Array(2));
    expect(Math.abs(out[0]! - xd)).toBeLessThan(1e-15);
    expect(Math.abs(out[1]! - yd)).toBeLessThan(1e-15);
  });

  test.each([
    [0, 0],
    [0.3, 0.2],
    [-0.5, 0.35],
    [0.6, -0.4],
  ])('Newton undistortion inverts the distortion at (%f, %f)', (x, y) => {
    const dist = distortNormalised(x, y, d, new Float64Array(2));
    const back = new Float64Array(2);
    expect(undistortNormalised(dist[0]!, dist[1]!, d, dist[0]!, dist[1]!, back)).toBe(true);
    expect(Math.abs(back[0]! - x)).toBeLessThan(1e-12);
    expect(Math.abs(back[1]! - y)).toBeLessThan(1e-12);
  });

  test('area anti-aliasing: a frontal board with an edge a quarter pixel into a column', () => {
    // Pinhole, fx = fy = 100, board frontal at 1 m: 1 cm = 1 px. Corner 0 at pixel (50.25, 40.5).
    const cam = { width: 120, height: 100, fx: 100, fy: 100, cx: 50.25, cy: 40.5 };
    const board = { columns: 3, rows: 3, squareM: 0.1 };
    const T = { R: so3Exp([0, 0, 0]), t: new Float64Array([0, 0, 1]) };
    const r = renderBoard(cam, board, T, { black: 0.1, white: 0.9, quantize: false });
    const at = (u: number, v: number): number => r.image.data[v * cam.width + u]!;
    // Square (−1, −1), u ∈ [40.25, 50.25], v ∈ [30.5, 40.5], is black; square (0, −1) white.
    expect(at(45, 35)).toBeCloseTo(0.1 * 255, 4);
    expect(at(55, 35)).toBeCloseTo(0.9 * 255, 4);
    // Pixel 50 spans u ∈ [49.5, 50.5]: 3/4 black, 1/4 white (exact with the 12 x 12 grid).
    expect(at(50, 35)).toBeCloseTo((0.75 * 0.1 + 0.25 * 0.9) * 255, 4);
    expect(r.cornersPx[0]).toBeCloseTo(50.25, 12);
    expect(r.cornersPx[1]).toBeCloseTo(40.5, 12);
    expect(r.cornersPx[2]).toBeCloseTo(60.25, 12);
    expect(r.boardInside).toBe(true);
    expect(r.minSquarePx).toBeCloseTo(10, 9);
  });

  test('ground truth is the forward projection through pose and distortion', () => {
    const cam = { width: 640, height: 480, fx: 500, fy: 505, cx: 320.2, cy: 241.7, distortion: d };
    const T = { R: so3Exp([0.2, -0.1, 0.4]), t: new Float64Array([-0.1, -0.05, 0.7]) };
    const r = renderBoard(cam, { columns: 5, rows: 4, squareM: 0.04 }, T);
    const uv = new Float64Array(2);
    for (let id = 0; id < 20; id++) {
      const X = (id % 5) * 0.04, Y = Math.floor(id / 5) * 0.04;
      const p = [0, 1, 2].map((i) => T.R[3 * i]! * X + T.R[3 * i + 1]! * Y + T.t[i]!);
      const dd = distortNormalised(p[0]! / p[2]!, p[1]! / p[2]!, d, new Float64Array(2));
      expect(r.cornersPx[2 * id]).toBeCloseTo(cam.fx * dd[0]! + cam.cx, 9);
      expect(r.cornersPx[2 * id + 1]).toBeCloseTo(cam.fy * dd[1]! + cam.cy, 9);
      expect(projectBoardPoint(cam, T, X, Y, uv)).toBe(true);
    }
  });
});
