/**
 * Single-view pose estimation (PnP) for the rig solver: T_cam_target from a
 * target's 3D points and their detected pixels, through any CameraModel.
 *
 * Steps:
 *  1. Check the input (sizes, ≥ 4 points, finite values) and unproject every
 *     pixel to a unit bearing.
 *  2. Shape of the point set from the singular values σ1 ≥ σ2 ≥ σ3 of the
 *     centred points: σ2/σ1 < collinearRatio → 'pnp.collinear' (the pose
 *     about the line is unobservable); σ3/σ1 < planarRatio → planar
 *     initialisers (homography on normalised points within a 75° cone, and
 *     EPnP with 3 control points on all bearings); σ3/σ1 ≥ nonPlanarRatio →
 *     EPnP with 4 control points. Near-planar sets get both kinds.
 *  3. Every initial pose is refined by LM through the full camera model; the
 *     lowest reprojection RMS wins.
 *  4. The winner is verified: every point projects (is in front of the camera
 *     and inside the model's valid region), has positive depth along its
 *     bearing, and the RMS is finite (and ≤ maxRmsPx when given). Otherwise a
 *     PnpError is thrown; a pose is never returned unverified.
 */
import type { CameraModel } from '../camera/model.js';
import { compose, inverse, type Pose } from '../geometry/se3.js';
import { PnpError } from './errors.js';
import { epnp } from './epnp.js';
import { planarPose, PLANAR_MAX_ANGLE_RAD } from './planar.js';
import { refinePose, type RefineResult, type RefineOptions } from './refine.js';

export { PnpError, type PnpErrorCode } from './errors.js';
export { estimateHomography, applyHomography, type HomographyResult, type HomographyFailure } from './homography.js';
export { planarPose, PLANAR_MAX_ANGLE_RAD, type PlanarPoseResult } from './planar.js';
export { epnp, procrustes, bearingError, type EpnpResult } from './epnp.js';
export { refinePose, reprojectionResiduals, DEFAULT_REFINE_OPTIONS, type RefineOptions, type RefineResult, type RefineStatus } from './refine.js';

export type PnpMethod = 'planar' | 'epnp';

export interface PnpOptions {
  /** σ2/σ1 of the centred points below this → 'pnp.collinear'. Default 1e-6. */
  collinearRatio?: number;
  /** σ3/σ1 below this → try the planar initialisers. Default 0.05. */
  planarRatio?: number;
  /** σ3/σ1 at or above this → try 4-control-point EPnP. Default 1e-4. */
  nonPlanarRatio?: number;
  /** When set, an RMS above this many pixels is an error ('pnp.poor_fit'). Default: no bound. */
  maxRmsPx?: number;
  /** Options of the LM refinement. */
  refine?: RefineOptions;
  /**
   * When set, a planar initial pose whose refinement reaches an RMS at or
   * below this many pixels is accepted without also trying EPnP (faster on
   * many views; EPnP still runs when the planar path fails or fits worse).
   * Default: undefined (every applicable initialiser is refined, the best kept).
   */
  acceptPlanarRmsPx?: number;
}

export interface PnpResult {
  T_cam_target: Pose;
  /** sqrt(mean over points of du² + dv²) after refinement, pixels. */
  rmsPx: number;
  /** Per-point reprojection error norms √(du² + dv²), pixels (n, point i at index i). */
  residualsPx: Float64Array;
  /** Per-point residuals (du, dv) = predicted − detected, uv interleaved, pixels (2n). */
  residualsUvPx: Float64Array;
  /** Initialiser whose refined pose won. */
  method: PnpMethod;
  /** LM iterations of the winning refinement. */
  iterations: number;
  /** Whether the winning refinement met a convergence criterion. */
  converged: boolean;
}

/**
 * solvePnP(model, params, points3d, pixels, options?) → PnpResult.
 * points3d: xyz interleaved, target frame, metres (3n). pixels: uv
 * interleaved (2n), point i ↔ pixel i. Throws PnpError on any input or
 * numerical problem that prevents a verified pose.
 */
export function solvePnP(
  model: CameraModel,
  params: ArrayLike<number>,
  points3d: ArrayLike<number>,
  pixels: ArrayLike<number>,
  options: PnpOptions = {},
): PnpResult {
  const collinearRatio = options.collinearRatio ?? 1e-6;
  const planarRatio = options.planarRatio ?? 0.05;
  const nonPlanarRatio = options.nonPlanarRatio ?? 1e-4;

  if (points3d.length % 3 !== 0 || pixels.length % 2 !== 0 || points3d.length / 3 !== pixels.length / 2) {
    throw new PnpError('pnp.size_mismatch', `points3d has ${points3d.length} values and pixels ${pixels.length}; expected 3n and 2n for the same n → pass xyz and uv interleaved, one pixel per point`);
  }
  const n = points3d.length / 3;
  if (n < 4) {
    throw new PnpError('pnp.too_few_points', `pose estimation needs at least 4 points, got ${n} → use a view in which more of the target is detected`);
  }
  for (let i = 0; i < n; i++) {
    const x = points3d[3 * i]!, y = points3d[3 * i + 1]!, z = points3d[3 * i + 2]!, u = pixels[2 * i]!, v = pixels[2 * i + 1]!;
    if (!(Number.isFinite(x) && Number.isFinite(y) && Number.isFinite(z) && Number.isFinite(u) && Number.isFinite(v))) {
      const vals = [x, y, z, u, v];
      throw new PnpError('pnp.non_finite', `point ${i} has a non-finite value (xyz ${vals.slice(0, 3).join(', ')}; uv ${vals.slice(3).join(', ')}) → remove it or fix the detection`);
    }
  }
  for (let i = 0; i < params.length; i++) {
    if (!Number.isFinite(params[i]!)) throw new PnpError('pnp.non_finite', `camera parameter ${model.paramNames[i] ?? i} is ${params[i]}`);
  }

  const bearings = new Float64Array(3 * n);
  const ray = new Float64Array(3);
  const uv = new Float64Array(2);
  const failed: number[] = [];
  for (let i = 0; i < n; i++) {
    uv[0] = pixels[2 * i]!;
    uv[1] = pixels[2 * i + 1]!;
    if (!model.unproject(params, uv, ray) || !(Number.isFinite(ray[0]!) && Number.isFinite(ray[1]!) && Number.isFinite(ray[2]!))) failed.push(i);
    else {
      bearings[3 * i] = ray[0]!;
      bearings[3 * i + 1] = ray[1]!;
      bearings[3 * i + 2] = ray[2]!;
    }
  }
  if (failed.length > 0) {
    const list = failed.slice(0, 5).map((i) => `${i} (${pixels[2 * i]}, ${pixels[2 * i + 1]})`).join(', ');
    throw new PnpError('pnp.unprojectable', `${failed.length} pixel(s) lie outside the valid region of the ${model.name} model: point ${list}${failed.length > 5 ? ', …' : ''} → check the intrinsics or drop these detections`);
  }

  // Shape of the point set: eigen-decomposition of the centred scatter matrix.
  const c = [0, 0, 0];
  for (let i = 0; i < n; i++) for (let d = 0; d < 3; d++) c[d]! += points3d[3 * i + d]! / n;
  const S = new Float64Array(9);
  for (let i = 0; i < n; i++) {
    const q0 = points3d[3 * i]! - c[0]!, q1 = points3d[3 * i + 1]! - c[1]!, q2 = points3d[3 * i + 2]! - c[2]!;
    S[0]! += q0 * q0; S[1]! += q0 * q1; S[2]! += q0 * q2;
    S[4]! += q1 * q1; S[5]! += q1 * q2;
    S[8]! += q2 * q2;
  }
  S[3] = S[1]!;
  S[6] = S[2]!;
  S[7] = S[5]!;
  const eigVectors = new Float64Array(9);
  const eigValues = symmetricEigen3(S, eigVectors);
  const order = [0, 1, 2].sort((a, b) => eigValues[b]! - eigValues[a]!);
  const sig = order.map((i) => Math.sqrt(Math.max(eigValues[i]!, 0)));
  if (!(sig[0]! > 0) || sig[1]! < collinearRatio * sig[0]!) {
    throw new PnpError('pnp.collinear', `the ${n} target points are collinear (σ2/σ1 = ${(sig[0]! > 0 ? sig[1]! / sig[0]! : 0).toExponential(2)}); the rotation about their line cannot be determined → use points that span a plane or a volume`);
  }
  const ratio3 = sig[2]! / sig[0]!;

  const initial: { pose: Pose; method: PnpMethod; refined?: RefineResult }[] = [];
  const failures: { reason: string; message: string }[] = [];
  if (ratio3 < planarRatio) {
    // Plane frame P: origin at the centroid, axes the principal directions (right-handed).
    const e = order.map((i) => [0, 1, 2].map((d) => eigVectors[d * 3 + i]!));
    const e1 = e[0]!, e2 = e[1]!;
    const e3 = [e1[1]! * e2[2]! - e1[2]! * e2[1]!, e1[2]! * e2[0]! - e1[0]! * e2[2]!, e1[0]! * e2[1]! - e1[1]! * e2[0]!];
    const T_target_plane: Pose = {
      R: Float64Array.of(e1[0]!, e2[0]!, e3[0]!, e1[1]!, e2[1]!, e3[1]!, e1[2]!, e2[2]!, e3[2]!),
      t: Float64Array.from(c),
    };
    const cosMax = Math.cos(PLANAR_MAX_ANGLE_RAD);
    const planeXY: number[] = [];
    const normXY: number[] = [];
    for (let i = 0; i < n; i++) {
      const fz = bearings[3 * i + 2]!;
      if (fz < cosMax) continue;
      const q = [points3d[3 * i]! - c[0]!, points3d[3 * i + 1]! - c[1]!, points3d[3 * i + 2]! - c[2]!];
      planeXY.push(q[0]! * e1[0]! + q[1]! * e1[1]! + q[2]! * e1[2]!, q[0]! * e2[0]! + q[1]! * e2[1]! + q[2]! * e2[2]!);
      normXY.push(bearings[3 * i]! / fz, bearings[3 * i + 1]! / fz);
    }
    let planarGood = false;
    if (planeXY.length >= 8) {
      const pr = planarPose(planeXY, normXY);
      if (pr.ok) {
        const pose = compose(pr.T_cam_plane, inverse(T_target_plane));
        if (options.acceptPlanarRmsPx !== undefined) {
          const refined = refinePose(model, params, pose, points3d, pixels, options.refine);
          initial.push({ pose, method: 'planar', refined });
          planarGood = refined.status !== 'invalid_point' && refined.rmsPx <= options.acceptPlanarRmsPx && inFront(refined.T_cam_target, points3d, bearings, n);
        } else initial.push({ pose, method: 'planar' });
      } else failures.push(pr);
    }
    if (!planarGood) {
      const ep = epnp(points3d, bearings, true);
      if (ep.ok) initial.push({ pose: ep.T_cam_target, method: 'epnp' });
      else failures.push(ep);
    }
  }
  if (ratio3 >= nonPlanarRatio) {
    const ep = epnp(points3d, bearings, false);
    if (ep.ok) initial.push({ pose: ep.T_cam_target, method: 'epnp' });
    else failures.push(ep);
  }

  let best: PnpResult | undefined;
  for (const init of initial) {
    const r = init.refined ?? refinePose(model, params, init.pose, points3d, pixels, options.refine);
    if (r.status === 'invalid_point' || !Number.isFinite(r.rmsPx)) {
      failures.push({ reason: 'behind_camera', message: r.message });
      continue;
    }
    if (!inFront(r.T_cam_target, points3d, bearings, n)) {
      failures.push({ reason: 'behind_camera', message: 'refined pose puts a point behind its bearing' });
      continue;
    }
    // Initialisers that reach the same minimum tie to rounding; keep the first (planar before EPnP).
    if (!best || r.rmsPx < best.rmsPx * (1 - 1e-9)) {
      best = { T_cam_target: r.T_cam_target, rmsPx: r.rmsPx, residualsPx: r.residualsPx, residualsUvPx: r.residualsUvPx, method: init.method, iterations: r.iterations, converged: r.converged };
    }
  }
  if (!best) {
    const behind = failures.find((f) => f.reason === 'behind_camera');
    if (behind) {
      throw new PnpError('pnp.behind_camera', `no pose puts all ${n} points in front of the camera: ${behind.message}`);
    }
    const why = failures.map((f) => f.message).join('; ') || 'no initialiser applied';
    throw new PnpError('pnp.no_solution', `no pose could be computed from ${n} points: ${why}`);
  }
  if (options.maxRmsPx !== undefined && !(best.rmsPx <= options.maxRmsPx)) {
    throw new PnpError('pnp.poor_fit', `best pose leaves an RMS reprojection error of ${best.rmsPx.toFixed(3)} px > maxRmsPx = ${options.maxRmsPx} → check the point/pixel correspondence and the intrinsics`);
  }
  return best;
}

/** Every point has positive depth along its detected bearing: (R p_i + t)·f_i > 0. */
function inFront(T: Pose, points3d: ArrayLike<number>, bearings: Float64Array, n: number): boolean {
  const R = T.R;
  for (let i = 0; i < n; i++) {
    const x = points3d[3 * i]!, y = points3d[3 * i + 1]!, z = points3d[3 * i + 2]!;
    const q0 = R[0]! * x + R[1]! * y + R[2]! * z + T.t[0]!;
    const q1 = R[3]! * x + R[4]! * y + R[5]! * z + T.t[1]!;
    const q2 = R[6]! * x + R[7]! * y + R[8]! * z + T.t[2]!;
    if (!(q0 * bearings[3 * i]! + q1 * bearings[3 * i + 1]! + q2 * bearings[3 * i + 2]! > 0)) return false;
  }
  return true;
}

/**
 * Eigen-decomposition of a symmetric 3x3 matrix (row-major) by cyclic Jacobi
 * rotations (Golub & Van Loan, Matrix Computations, §8.5). Returns the
 * eigenvalues (unordered); V receives the eigenvectors as columns, row-major.
 */
function symmetricEigen3(S: ArrayLike<number>, V: Float64Array): Float64Array {
  const A = Float64Array.from(S);
  V.fill(0);
  V[0] = 1;
  V[4] = 1;
  V[8] = 1;
  for (let sweep = 0; sweep < 50; sweep++) {
    const off = A[1]! * A[1]! + A[2]! * A[2]! + A[5]! * A[5]!;
    const diag = A[0]! * A[0]! + A[4]! * A[4]! + A[8]! * A[8]!;
    if (!(off > 1e-36 * diag)) break;
    for (let p = 0; p < 2; p++) {
      for (let q = p + 1; q < 3; q++) {
        const apq = A[p * 3 + q]!;
        if (apq === 0) continue;
        const app = A[p * 4]!;
        const aqq = A[q * 4]!;
        const theta = (aqq - app) / (2 * apq);
        const t = (theta >= 0 ? 1 : -1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const cs = 1 / Math.sqrt(t * t + 1);
        const sn = t * cs;
        // A ← Jᵀ A J with J the rotation in the (p, q) plane.
        for (let k = 0; k < 3; k++) {
          const akp = A[k * 3 + p]!;
          const akq = A[k * 3 + q]!;
          A[k * 3 + p] = cs * akp - sn * akq;
          A[k * 3 + q] = sn * akp + cs * akq;
        }
        for (let k = 0; k < 3; k++) {
          const apk = A[p * 3 + k]!;
          const aqk = A[q * 3 + k]!;
          A[p * 3 + k] = cs * apk - sn * aqk;
          A[q * 3 + k] = sn * apk + cs * aqk;
        }
        A[p * 3 + q] = 0;
        A[q * 3 + p] = 0;
        for (let k = 0; k < 3; k++) {
          const vkp = V[k * 3 + p]!;
          const vkq = V[k * 3 + q]!;
          V[k * 3 + p] = cs * vkp - sn * vkq;
          V[k * 3 + q] = sn * vkp + cs * vkq;
        }
      }
    }
  }
  return Float64Array.of(A[0]!, A[4]!, A[8]!);
}
