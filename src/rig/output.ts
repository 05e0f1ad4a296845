/**
 * Rig file (formats.md, rig-calibration/1) from a solution, and the derived
 * figures it carries: quaternion wxyz (w ≥ 0), URDF roll-pitch-yaw in
 * degrees, 1-sigma rotation (deg) and position (mm).
 *
 * Position sigma: with the left perturbation, δt_parent_camera = δt − [t]× δr,
 * so the position covariance is J Σ Jᵀ with J = [−[t]×, I].
 */
import { matrixToQuat, matrixToRpy } from '../geometry/rotation.js';
import type { RigCamera, RigFile } from '../io/types.js';
import type { CameraResult, RigSolution } from './solve.js';
import type { Pose } from '../geometry/se3.js';
import { symmetricPsd } from '../linalg/psd.js';
import { NumericalError } from '../errors.js';

export const RIG_FORMAT = 'rig-calibration/1';
const DEG = 180 / Math.PI;

/** Position covariance (3x3) of t from the 6x6 pose covariance (left perturbation). */
export function positionCovariance(t: ArrayLike<number>, cov: ArrayLike<number>): Float64Array {
  // J = [−[t]×, I] (3x6)
  const tx = t[0]!, ty = t[1]!, tz = t[2]!;
  const J = [0, tz, -ty, 1, 0, 0, -tz, 0, tx, 0, 1, 0, ty, -tx, 0, 0, 0, 1];
  const JS = new Float64Array(18);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 6; j++) {
    let s = 0;
    for (let k = 0; k < 6; k++) s += J[i * 6 + k]! * cov[k * 6 + j]!;
    JS[i * 6 + j] = s;
  }
  const P = new Float64Array(9);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) {
    let s = 0;
    for (let k = 0; k < 6; k++) s += JS[i * 6 + k]! * J[j * 6 + k]!;
    P[i * 3 + j] = s;
  }
  return P;
}

/** Rounds away binary noise below 1e-15 relative so files stay readable; keeps full double precision otherwise. */
function clean(x: number): number {
  return Object.is(x, -0) ? 0 : x;
}

/**
 * The camera's 6x6 covariance as written: symmetrised, tiny negative
 * eigenvalues from round-off clipped (linalg/psd.ts). Anything else is a
 * NumericalError 'rig.covariance_not_psd' naming the camera.
 */
export function writableCovariance(cam: CameraResult): Float64Array {
  const r = symmetricPsd(cam.covariance, 6);
  if (!r.ok) {
    throw new NumericalError(
      'rig.covariance_not_psd',
      `the covariance of camera ${cam.name} is not symmetric positive semi-definite (${r.message}); no rig file was written → the solve is numerically unreliable: capture more views of ${cam.name} at varied distances and tilts, and check its intrinsics`,
    );
  }
  return r.matrix;
}

export function rigCameraEntry(cam: CameraResult, rootName: string): RigCamera {
  const T = cam.T_ref_cam;
  const q = matrixToQuat(T.R);
  const rpy = matrixToRpy(T.R);
  const cov = writableCovariance(cam);
  const P = positionCovariance(T.t, cov);
  const nd = cam.model.numDistortion;
  const sqrt0 = (v: number) => Math.sqrt(Math.max(0, v));
  return {
    name: cam.name,
    parent: cam.isReference ? null : rootName,
    translation: [clean(T.t[0]!), clean(T.t[1]!), clean(T.t[2]!)],
    quaternion_wxyz: [clean(q[0]!), clean(q[1]!), clean(q[2]!), clean(q[3]!)],
    rpy_deg: [clean(rpy[0]! * DEG), clean(rpy[1]! * DEG), clean(rpy[2]! * DEG)],
    sigma_translation_mm: [sqrt0(P[0]!) * 1000, sqrt0(P[4]!) * 1000, sqrt0(P[8]!) * 1000],
    sigma_rotation_deg: [sqrt0(cov[0]!) * DEG, sqrt0(cov[7]!) * DEG, sqrt0(cov[14]!) * DEG],
    covariance: Array.from(cov, clean),
    model: cam.model.name,
    resolution: [0, 0],
    focal: [cam.intrinsics[0]!, cam.intrinsics[1]!],
    center: [cam.intrinsics[2]!, cam.intrinsics[3]!],
    distortion: Array.from(cam.intrinsics.subarray(4, 4 + nd)),
    rms_px: Number.isFinite(cam.rmsPx) ? cam.rmsPx : 0,
    detections_used: cam.detectionsUsed,
    detections_rejected: cam.detectionsRejected,
    ...(cam.intrinsicsSolved && cam.intrinsicsCovariance ? intrinsicsSigma(cam) : {}),
  };
}

/**
 * Extra fields for refined intrinsics: `intrinsics_sigma` maps each parameter
 * name to its 1-sigma (px for fx fy cx cy, unitless for distortion; 0 for a
 * parameter held fixed) and `intrinsics_covariance` is the full matrix,
 * row-major in the formats.md parameter order.
 */
function intrinsicsSigma(cam: CameraResult): Record<string, unknown> {
  const n = cam.model.numParams;
  const C = cam.intrinsicsCovariance!;
  const sigma: Record<string, number> = {};
  cam.model.paramNames.forEach((name, i) => {
    sigma[name] = Math.sqrt(Math.max(0, C[i * n + i]!));
  });
  return { intrinsics_sigma: sigma, intrinsics_covariance: Array.from(C, clean) };
}

/**
 * fixed_targets: a target's pose in the scene (the first target's frame) with
 * the same fields and conventions as a camera entry: T_parent_target,
 * covariance of its left perturbation in the parent frame.
 */
export function poseEntry(name: string, parent: string | null, T: Pose, cov: ArrayLike<number>): Record<string, unknown> {
  const q = matrixToQuat(T.R);
  const rpy = matrixToRpy(T.R);
  const P = positionCovariance(T.t, cov);
  const sqrt0 = (v: number) => Math.sqrt(Math.max(0, v));
  return {
    name,
    parent,
    translation: Array.from(T.t, clean),
    quaternion_wxyz: Array.from(q, clean),
    rpy_deg: Array.from(rpy, (x) => clean(x * DEG)),
    sigma_translation_mm: [sqrt0(P[0]!) * 1000, sqrt0(P[4]!) * 1000, sqrt0(P[8]!) * 1000],
    sigma_rotation_deg: [sqrt0(cov[0]!) * DEG, sqrt0(cov[7]!) * DEG, sqrt0(cov[14]!) * DEG],
    covariance: Array.from(cov, clean),
  };
}

export function buildRigFile(solution: RigSolution): RigFile {
  const s = solution.session;
  const root = s.cameras[solution.reference]!.name;
  const cameras = solution.cameras.map((c) => {
    const entry = rigCameraEntry(c, root);
    entry.resolution = [...s.cameras[c.index]!.resolution];
    return entry;
  });
  const targets = solution.targets.map((t, i) => poseEntry(t.name, i === 0 ? null : solution.targets[0]!.name, t.T_origin_target, t.covariance));
  return {
    format: RIG_FORMAT,
    name: s.name,
    root,
    cameras,
    ...(targets.length > 0 ? { targets } : {}),
    quality: {
      rms_px: solution.rmsPx,
      sigma0: solution.sigma0,
      frames_used: solution.framesUsed,
      iterations: solution.iterations,
      converged: solution.converged,
    },
  };
}
