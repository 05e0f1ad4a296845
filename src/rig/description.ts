/**
 * Rig descriptions (`format: rig-description/1`): a designed or known rig
 * (cameras with intrinsics and mounting poses in a body frame) plus an
 * optional capture plan for `simulate`, and optional design sigmas for use
 * as a prior. See README "Rig descriptions".
 *
 * Mounting convention: each camera's `position` (metres) and `mount_rpy_deg`
 * are given in the rig's body frame (x forward, y left, z up). mount_rpy_deg
 * is the URDF roll-pitch-yaw of the camera's *forward-looking* frame (x out of
 * the lens, y left, z up): [0, 0, 0] looks forward, [0, 0, 90] looks left,
 * [0, 20, 0] looks forward and 20° down. The optical frame (z out of the
 * lens, x right, y down) is that frame rotated by R_fwd_opt below.
 */
import type { CameraSpec, SceneMode, TargetSpec } from '../io/types.js';
import type { Pose } from '../geometry/se3.js';

/** Rotation from the optical frame to the forward-looking (x fwd, y left, z up) frame, row-major. */
export const R_FWD_OPT = Float64Array.from([0, 0, 1, -1, 0, 0, 0, -1, 0]);

export interface CapturePlan {
  frames: number;
  /** Board distance from the chosen camera, metres [min, max]. */
  distanceM: [number, number];
  /** Largest board tilt away from facing the camera, degrees. */
  tiltDeg: number;
  /** Gaussian pixel noise, px (1-sigma per axis). */
  pixelNoisePx: number;
  /** Fraction of detections replaced by gross outliers. */
  outlierFraction: number;
  /** Number of checkerboard views whose point ids are rotated by 180°. */
  flippedViews: number;
  /** Fraction of a target's points that must be inside the image for a view to count (1 = whole board). */
  minVisibleFraction: number;
  /** Largest angle between the board normal and the viewing ray, degrees (views beyond are not detected). */
  maxViewAngleDeg: number;
  seed: number;
  /** Seed of the pixel noise and outliers; defaults to one derived from `seed`. Vary it alone to keep the geometry. */
  noiseSeed?: number;
  /** moving_targets: fraction of frames aimed at the overlap of two cameras. */
  pairFraction: number;
  /** fixed_targets: number of rig poses is `frames`; the rig moves within this box (m) around the origin. */
  rigMotionM: [number, number, number];
  /** fixed_targets: largest rig yaw change, degrees. */
  rigYawDeg: number;
}

export interface DescribedCamera {
  spec: CameraSpec;
  /** T_body_cam (optical frame in the body frame). */
  T_body_cam: Pose;
  /** Design uncertainty (prior), 1-sigma; undefined when not given. */
  sigmaPositionM?: number;
  sigmaRotationRad?: number;
}

export interface DescribedTarget {
  spec: TargetSpec;
  /** fixed_targets only: pose of the target in the scene (body frame of the room). */
  T_scene_target?: Pose;
}

export interface RigDescription {
  format: 'rig-description/1';
  name: string;
  path: string;
  referenceCamera: string;
  bodyFrame: string;
  cameras: DescribedCamera[];
  targets: DescribedTarget[];
  scene: SceneMode;
  capture?: CapturePlan;
}
