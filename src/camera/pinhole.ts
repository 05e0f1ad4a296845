/**
 * Pinhole camera model (central perspective projection, no distortion).
 *
 * Parameters, in storage order (formats.md): fx fy cx cy (pixels).
 *
 *   x = X/Z,  y = Y/Z
 *   u = fx·x + cx,  v = fy·y + cy
 *
 * Valid for Z > MIN_DEPTH_M (1e-6 m). This is the finite projective camera
 * with zero skew (Hartley & Zisserman, "Multiple View Geometry in Computer
 * Vision", 2nd ed., 2003).
 *
 * Jacobians (row-major):
 *   J_uv_p    (2x3) = [[fx/Z, 0, −fx·x/Z], [0, fy/Z, −fy·y/Z]]
 *   J_uv_intr (2x4) = [[x, 0, 1, 0], [0, y, 0, 1]]
 */
import { MIN_DEPTH_M } from './limits.js';
import type { CameraModel } from './model.js';

export const PINHOLE_PARAM_NAMES = ['fx', 'fy', 'cx', 'cy'] as const;

function project(
  params: ArrayLike<number>,
  p_cam: ArrayLike<number>,
  uv: Float64Array,
  J_uv_p?: Float64Array,
  J_uv_intr?: Float64Array,
): boolean {
  const Z = p_cam[2]!;
  if (!(Z > MIN_DEPTH_M)) return false;
  const fx = params[0]!;
  const fy = params[1]!;
  const iz = 1 / Z;
  const x = p_cam[0]! * iz;
  const y = p_cam[1]! * iz;
  uv[0] = fx * x + params[2]!;
  uv[1] = fy * y + params[3]!;
  if (J_uv_p !== undefined) {
    J_uv_p[0] = fx * iz;
    J_uv_p[1] = 0;
    J_uv_p[2] = -fx * x * iz;
    J_uv_p[3] = 0;
    J_uv_p[4] = fy * iz;
    J_uv_p[5] = -fy * y * iz;
  }
  if (J_uv_intr !== undefined) {
    J_uv_intr[0] = x;
    J_uv_intr[1] = 0;
    J_uv_intr[2] = 1;
    J_uv_intr[3] = 0;
    J_uv_intr[4] = 0;
    J_uv_intr[5] = y;
    J_uv_intr[6] = 0;
    J_uv_intr[7] = 1;
  }
  return Number.isFinite(uv[0]!) && Number.isFinite(uv[1]!);
}

function unprojectToPlane(params: ArrayLike<number>, uv: ArrayLike<number>, out2: Float64Array): boolean {
  const x = (uv[0]! - params[2]!) / params[0]!;
  const y = (uv[1]! - params[3]!) / params[1]!;
  out2[0] = x;
  out2[1] = y;
  return Number.isFinite(x) && Number.isFinite(y);
}

function unproject(params: ArrayLike<number>, uv: ArrayLike<number>, ray: Float64Array): boolean {
  const x = (uv[0]! - params[2]!) / params[0]!;
  const y = (uv[1]! - params[3]!) / params[1]!;
  const n = Math.sqrt(x * x + y * y + 1);
  ray[0] = x / n;
  ray[1] = y / n;
  ray[2] = 1 / n;
  return Number.isFinite(n) && n > 0 && ray[2]! > 0;
}

/** The pinhole model: fx fy cx cy. */
export const pinhole: CameraModel = Object.freeze({
  name: 'pinhole' as const,
  paramNames: PINHOLE_PARAM_NAMES,
  numParams: 4,
  numDistortion: 0,
  project,
  unproject,
  unprojectToPlane,
});
