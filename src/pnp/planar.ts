/**
 * Pose of a planar target from a homography (the decomposition used in
 * Z. Zhang, "A flexible new technique for camera calibration", IEEE TPAMI 2000, §3.1,
 * here with the intrinsics already removed).
 *
 * The target points lie in the plane z = 0 of the "plane frame" P. With
 * normalised image points m = (x/z, y/z, 1) (undistorted, from the camera's
 * unproject), m ~ [r1 r2 t]·(X, Y, 1), so the homography H from (X, Y) to
 * (x, y) satisfies H = λ[r1 r2 t]. We take λ = (‖h1‖ + ‖h2‖)/2, choose its
 * sign so that the points have positive depth z = (h3ᵀ(X, Y, 1))/λ, and
 * project [r1 r2 r1×r2] onto SO(3) with nearestRotation (SVD).
 *
 * Fisheye views: normalised points x/z blow up as the viewing angle nears
 * 90° and do not exist beyond it. The caller (index.ts) therefore passes only
 * points whose bearing lies within a cone of PLANAR_MAX_ANGLE_RAD around the
 * optical axis; if fewer than 4 non-collinear points remain, it uses the
 * bearing-vector EPnP (planar variant, 3 control points) instead, which works
 * for any bearing direction, including z ≤ 0.
 */
import { nearestRotation } from '../geometry/so3.js';
import type { Pose } from '../geometry/se3.js';
import { estimateHomography, type HomographyFailure } from './homography.js';

/** Bearings further than this from the optical axis are left out of the homography fit (75°). */
export const PLANAR_MAX_ANGLE_RAD = (75 * Math.PI) / 180;

export type PlanarPoseResult =
  | { ok: true; T_cam_plane: Pose; H: Float64Array }
  | { ok: false; reason: HomographyFailure | 'behind_camera'; message: string };

/**
 * planarPose(planeXY, normalisedXY) → T_cam_plane.
 * planeXY: interleaved (X, Y) of the points in the plane frame (z = 0), metres.
 * normalisedXY: interleaved undistorted normalised image points (x/z, y/z).
 */
export function planarPose(planeXY: ArrayLike<number>, normalisedXY: ArrayLike<number>): PlanarPoseResult {
  const hr = estimateHomography(planeXY, normalisedXY);
  if (!hr.ok) return hr;
  const H = hr.H;
  const n1 = Math.hypot(H[0]!, H[3]!, H[6]!);
  const n2 = Math.hypot(H[1]!, H[4]!, H[7]!);
  let lambda = 0.5 * (n1 + n2);
  // Depth of point i is proportional to h3ᵀ(X, Y, 1)/λ; pick the sign that puts most points in front.
  const n = planeXY.length / 2;
  let positive = 0;
  for (let i = 0; i < n; i++) {
    const w = H[6]! * planeXY[2 * i]! + H[7]! * planeXY[2 * i + 1]! + H[8]!;
    if (w > 0) positive++;
  }
  if (positive < n - positive) lambda = -lambda;
  // After the sign choice every point must be in front; a split means the plane crosses z = 0.
  const front = Math.max(positive, n - positive);
  if (front < n) {
    return { ok: false, reason: 'behind_camera', message: `${n - front} of ${n} target points would lie behind the camera for this homography` };
  }
  const r1 = [H[0]! / lambda, H[3]! / lambda, H[6]! / lambda];
  const r2 = [H[1]! / lambda, H[4]! / lambda, H[7]! / lambda];
  const r3 = [r1[1]! * r2[2]! - r1[2]! * r2[1]!, r1[2]! * r2[0]! - r1[0]! * r2[2]!, r1[0]! * r2[1]! - r1[1]! * r2[0]!];
  const M = Float64Array.of(r1[0]!, r2[0]!, r3[0]!, r1[1]!, r2[1]!, r3[1]!, r1[2]!, r2[2]!, r3[2]!);
  const R = nearestRotation(M);
  const t = Float64Array.of(H[2]! / lambda, H[5]! / lambda, H[8]! / lambda);
  return { ok: true, T_cam_plane: { R, t }, H };
}
