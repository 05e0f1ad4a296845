/**
 * Random board poses for synthetic detection tests and benches: the board
 * faces the camera within a tilt limit, at any in-plane rotation, and its
 * checkered area is fully inside the image with squares of at least
 * `minSquarePx` (checked on the rendered ground truth by the caller or by
 * `sampleVisibleBoard`).
 */
import type { Pose } from '../geometry/se3.js';
import { so3Exp } from '../geometry/so3.js';
import { mat3Mul } from '../linalg/small.js';
import { projectBoardPoint, type RenderBoard, type RenderCamera } from './render-board.js';

export interface PoseSampling {
  /** Largest tilt about the board's x and y axes, rad (default 0.7). */
  maxTiltRad?: number;
  /** In-plane rotation range ±, rad (default π). */
  maxRollRad?: number;
  /** Smallest neighbouring-corner distance in px (default 20). */
  minSquarePx?: number;
}

/**
 * Draws poses T_cam_board until the board's checkered area (outer squares
 * included) projects inside the image with a 2 px margin and every square
 * side is at least minSquarePx. Distances are drawn so that the board spans
 * between about 35 % and 95 % of the image width.
 */
export function sampleVisibleBoard(rand: () => number, cam: RenderCamera, board: RenderBoard, opts: PoseSampling = {}): Pose {
  const C = board.columns, Rn = board.rows, s = board.squareM;
  const maxTilt = opts.maxTiltRad ?? 0.7, maxRoll = opts.maxRollRad ?? Math.PI, minSq = opts.minSquarePx ?? 20;
  const widthM = (Math.max(C, Rn) + 1) * s;
  for (let attempt = 0; attempt < 10000; attempt++) {
    const Rz = so3Exp([0, 0, (rand() * 2 - 1) * maxRoll]);
    const Rt = so3Exp([(rand() * 2 - 1) * maxTilt, (rand() * 2 - 1) * maxTilt, 0]);
    const R = mat3Mul(new Float64Array(9), Rz, Rt);
    const spanFrac = 0.35 + 0.6 * rand();
    const Z = (cam.fx * widthM) / (spanFrac * Math.min(cam.width, cam.height) * 1.2);
    const ctr = [((rand() * 2 - 1) * 0.25 * cam.width * Z) / cam.fx, ((rand() * 2 - 1) * 0.25 * cam.height * Z) / cam.fy, Z];
    const bc = [((C - 1) * s) / 2, ((Rn - 1) * s) / 2];
    const t = new Float64Array(3);
    for (let i = 0; i < 3; i++) t[i] = ctr[i]! - (R[3 * i]! * bc[0]! + R[3 * i + 1]! * bc[1]!);
    const T = { R, t };
    // Drawn tilts stay below 90°, so the printed side always faces the camera; boardInView checks it anyway.
    if (boardInView(cam, board, T, { marginPx: 2, minSquarePx: minSq })) return T;
  }
  throw new Error('sampleVisibleBoard: no admissible pose in 10000 draws; the board is too large or too small for this camera');
}

/**
 * True when the board's checkered area (outer squares included) projects
 * inside the image with `marginPx` to spare, the camera sees the printed side
 * (the camera centre lies on the board's −z side), and every square side is
 * at least `minSquarePx`.
 */
export function boardInView(cam: RenderCamera, board: RenderBoard, T_cam_board: Pose, opts: { marginPx?: number; minSquarePx?: number } = {}): boolean {
  const C = board.columns, Rn = board.rows, s = board.squareM;
  const m = opts.marginPx ?? 2, minSq = opts.minSquarePx ?? 0;
  const R = T_cam_board.R, t = T_cam_board.t;
  // Camera centre in board coordinates: z = −(R column 3 · t).
  if (!(-(R[2]! * t[0]! + R[5]! * t[1]! + R[8]! * t[2]!) < 0)) return false;
  const uv = new Float64Array(2);
  const n = 24;
  for (let k = 0; k <= n; k++) {
    const f = k / n;
    for (const [X, Y] of [
      [-s + f * (C + 1) * s, -s],
      [-s + f * (C + 1) * s, Rn * s],
      [-s, -s + f * (Rn + 1) * s],
      [C * s, -s + f * (Rn + 1) * s],
    ] as [number, number][]) {
      if (!projectBoardPoint(cam, T_cam_board, X, Y, uv) || uv[0]! < m || uv[1]! < m || uv[0]! > cam.width - 1 - m || uv[1]! > cam.height - 1 - m) return false;
    }
  }
  if (minSq > 0) {
    const a = new Float64Array(2);
    for (let r = 0; r < Rn; r++) {
      for (let c = 0; c < C; c++) {
        projectBoardPoint(cam, T_cam_board, c * s, r * s, uv);
        if (c + 1 < C && projectBoardPoint(cam, T_cam_board, (c + 1) * s, r * s, a) && Math.hypot(a[0]! - uv[0]!, a[1]! - uv[1]!) < minSq) return false;
        if (r + 1 < Rn && projectBoardPoint(cam, T_cam_board, c * s, (r + 1) * s, a) && Math.hypot(a[0]! - uv[0]!, a[1]! - uv[1]!) < minSq) return false;
      }
    }
  }
  return true;
}
