/**
 * Pose refinement: Levenberg–Marquardt over the 6-DoF pose T_cam_target,
 * minimising the reprojection error through the full camera model
 * (distortion and fisheye included):
 *
 *   E(T) = ½ Σ_i ‖r_i‖²,   r_i = project(params, R p_i + t) − uv_i   (pixels).
 *
 * Updates are left perturbations T ← exp(δ)·T with δ = [rx ry rz tx ty tz]
 * (src/geometry/CONVENTIONS.md), so the Jacobian of a residual is
 *   J_r_T = J_uv_p · J_p_T,   J_p_T = [−[p_cam]×, I]   (2x6 per point),
 * with J_uv_p from CameraModel.project and J_p_T from geometry `act`.
 *
 * The damped normal equations (JᵀJ + λ·D) δ = −Jᵀr, D = diag(JᵀJ) (Marquardt's
 * scaling, floored at 1e-12·max diag) are 6x6 and solved by Cholesky.
 */
import type { CameraModel } from '../camera/model.js';
import { act, boxPlus, type Pose } from '../geometry/se3.js';
import { choleskyInPlace, choleskySolveInPlace } from '../linalg/small.js';

export interface RefineOptions {
  /** Maximum number of LM iterations (accepted or rejected steps). Default 100. */
  maxIterations?: number;
  /** Stop when (cost_old − cost_new) ≤ functionTolerance · cost_old after an accepted step. Default 1e-14. */
  functionTolerance?: number;
  /** Stop when ‖δ‖ ≤ stepTolerance · (1 + ‖t‖) (δ in rad and metres). Default 1e-14. */
  stepTolerance?: number;
  /** Initial damping relative to max diag(JᵀJ). Default 1e-4. */
  initialLambda?: number;
}

export const DEFAULT_REFINE_OPTIONS: Readonly<Required<RefineOptions>> = Object.freeze({
  maxIterations: 100,
  functionTolerance: 1e-14,
  stepTolerance: 1e-14,
  initialLambda: 1e-4,
});

export type RefineStatus = 'converged' | 'no_convergence' | 'invalid_point';

export interface RefineResult {
  T_cam_target: Pose;
  /** sqrt(mean over points of du² + dv²), pixels. */
  rmsPx: number;
  /** Per-point reprojection error norms √(du² + dv²), pixels (n; NaN for status 'invalid_point'). */
  residualsPx: Float64Array;
  /** Per-point residuals (du, dv) = (u_pred − u, v_pred − v), interleaved, pixels (2n). */
  residualsUvPx: Float64Array;
  /** Number of LM iterations performed (accepted + rejected steps). */
  iterations: number;
  converged: boolean;
  status: RefineStatus;
  /** Which stopping rule fired, in words. */
  message: string;
  /** For status 'invalid_point': the index of a point the model cannot project at the initial pose. */
  invalidPoint?: number;
}

/**
 * Residuals r_i = project(R p_i + t) − uv_i (interleaved, 2n) at pose T.
 * Fills J_r_T (2n x 6 row-major, left perturbation of T_cam_target) when
 * provided. Returns the index of the first point the model cannot project
 * (behind the camera, beyond the valid angle), or −1 when all are valid.
 */
export function reprojectionResiduals(
  model: CameraModel,
  params: ArrayLike<number>,
  T_cam_target: Pose,
  points3d: ArrayLike<number>,
  pixels: ArrayLike<number>,
  res: Float64Array,
  J_r_T?: Float64Array,
): number {
  const n = points3d.length / 3;
  const p = scratchP;
  const pt = scratchPt;
  const uv = scratchUv;
  const J_p_T = J_r_T ? scratchJpT : undefined;
  const J_uv_p = J_r_T ? scratchJuvp : undefined;
  for (let i = 0; i < n; i++) {
    pt[0] = points3d[3 * i]!;
    pt[1] = points3d[3 * i + 1]!;
    pt[2] = points3d[3 * i + 2]!;
    act(T_cam_target, pt, p, J_p_T);
    if (!model.project(params, p, uv, J_uv_p)) return i;
    res[2 * i] = uv[0]! - pixels[2 * i]!;
    res[2 * i + 1] = uv[1]! - pixels[2 * i + 1]!;
    if (J_r_T && J_p_T && J_uv_p) {
      for (let r = 0; r < 2; r++) {
        for (let c = 0; c < 6; c++) {
          J_r_T[(2 * i + r) * 6 + c] = J_uv_p[r * 3]! * J_p_T[c]! + J_uv_p[r * 3 + 1]! * J_p_T[6 + c]! + J_uv_p[r * 3 + 2]! * J_p_T[12 + c]!;
        }
      }
    }
  }
  return -1;
}

const scratchP = new Float64Array(3);
const scratchPt = new Float64Array(3);
const scratchUv = new Float64Array(2);
const scratchJpT = new Float64Array(18);
const scratchJuvp = new Float64Array(6);

/**
 * Residuals (as reprojectionResiduals) together with the Gauss–Newton normal
 * equations JᵀJ (6x6, full) and g = Jᵀr, accumulated point by point without
 * storing J. Each row of J is J_uv_p[row] · [−[p]×, I], i.e. for a row
 * a = (a0, a1, a2): [a × p, a] = [a2 y − a1 z, a0 z − a2 x, a1 x − a0 y, a0, a1, a2].
 * Returns the first point that cannot be projected, or −1.
 */
function normalEquations(
  model: CameraModel,
  params: ArrayLike<number>,
  T: Pose,
  points3d: ArrayLike<number>,
  pixels: ArrayLike<number>,
  res: Float64Array,
  JtJ: Float64Array,
  g: Float64Array,
): number {
  const n = points3d.length / 3;
  const R = T.R;
  const r0 = R[0]!, r1 = R[1]!, r2 = R[2]!, r3 = R[3]!, r4 = R[4]!, r5 = R[5]!, r6 = R[6]!, r7 = R[7]!, r8 = R[8]!;
  const t0 = T.t[0]!, t1 = T.t[1]!, t2 = T.t[2]!;
  const p = scratchP;
  const uv = scratchUv;
  const Jp = scratchJuvp;
  let a00 = 0, a01 = 0, a02 = 0, a03 = 0, a04 = 0, a05 = 0;
  let a11 = 0, a12 = 0, a13 = 0, a14 = 0, a15 = 0;
  let a22 = 0, a23 = 0, a24 = 0, a25 = 0;
  let a33 = 0, a34 = 0, a35 = 0;
  let a44 = 0, a45 = 0;
  let a55 = 0;
  let b0 = 0, b1 = 0, b2 = 0, b3 = 0, b4 = 0, b5 = 0;
  for (let i = 0; i < n; i++) {
    const X = points3d[3 * i]!, Y = points3d[3 * i + 1]!, Z = points3d[3 * i + 2]!;
    const x = r0 * X + r1 * Y + r2 * Z + t0;
    const y = r3 * X + r4 * Y + r5 * Z + t1;
    const z = r6 * X + r7 * Y + r8 * Z + t2;
    p[0] = x;
    p[1] = y;
    p[2] = z;
    if (!model.project(params, p, uv, Jp)) return i;
    const e0 = uv[0]! - pixels[2 * i]!;
    const e1 = uv[1]! - pixels[2 * i + 1]!;
    res[2 * i] = e0;
    res[2 * i + 1] = e1;
    for (let row = 0; row < 2; row++) {
      const q0 = Jp[3 * row]!, q1 = Jp[3 * row + 1]!, q2 = Jp[3 * row + 2]!;
      const e = row === 0 ? e0 : e1;
      const j0 = q2 * y - q1 * z, j1 = q0 * z - q2 * x, j2 = q1 * x - q0 * y;
      b0 += j0 * e; b1 += j1 * e; b2 += j2 * e; b3 += q0 * e; b4 += q1 * e; b5 += q2 * e;
      a00 += j0 * j0; a01 += j0 * j1; a02 += j0 * j2; a03 += j0 * q0; a04 += j0 * q1; a05 += j0 * q2;
      a11 += j1 * j1; a12 += j1 * j2; a13 += j1 * q0; a14 += j1 * q1; a15 += j1 * q2;
      a22 += j2 * j2; a23 += j2 * q0; a24 += j2 * q1; a25 += j2 * q2;
      a33 += q0 * q0; a34 += q0 * q1; a35 += q0 * q2;
      a44 += q1 * q1; a45 += q1 * q2;
      a55 += q2 * q2;
    }
  }
  const A = JtJ;
  A[0] = a00; A[1] = a01; A[2] = a02; A[3] = a03; A[4] = a04; A[5] = a05;
  A[6] = a01; A[7] = a11; A[8] = a12; A[9] = a13; A[10] = a14; A[11] = a15;
  A[12] = a02; A[13] = a12; A[14] = a22; A[15] = a23; A[16] = a24; A[17] = a25;
  A[18] = a03; A[19] = a13; A[20] = a23; A[21] = a33; A[22] = a34; A[23] = a35;
  A[24] = a04; A[25] = a14; A[26] = a24; A[27] = a34; A[28] = a44; A[29] = a45;
  A[30] = a05; A[31] = a15; A[32] = a25; A[33] = a35; A[34] = a45; A[35] = a55;
  g[0] = b0; g[1] = b1; g[2] = b2; g[3] = b3; g[4] = b4; g[5] = b5;
  return -1;
}

function sumSq(r: Float64Array): number {
  let s = 0;
  for (let i = 0; i < r.length; i++) s += r[i]! * r[i]!;
  return s;
}

/**
 * refinePose(model, params, T0, points3d, pixels) → RefineResult.
 * points3d: xyz interleaved (target frame, metres); pixels: uv interleaved.
 * Never throws on numerical trouble: a point that cannot be projected at the
 * initial pose gives status 'invalid_point'; steps that would make a point
 * unprojectable are rejected like steps that increase the cost.
 *
 * A trial pose is evaluated together with its normal equations, so an
 * accepted step needs no second pass over the points.
 */
export function refinePose(
  model: CameraModel,
  params: ArrayLike<number>,
  T0: Pose,
  points3d: ArrayLike<number>,
  pixels: ArrayLike<number>,
  options: RefineOptions = {},
): RefineResult {
  const o = { ...DEFAULT_REFINE_OPTIONS, ...options };
  const n = points3d.length / 3;
  let T: Pose = { R: Float64Array.from(T0.R), t: Float64Array.from(T0.t) };
  let Tn: Pose = { R: new Float64Array(9), t: new Float64Array(3) };
  let res = new Float64Array(2 * n);
  let resNew = new Float64Array(2 * n);
  let JtJ = new Float64Array(36);
  let g = new Float64Array(6);
  let JtJn = new Float64Array(36);
  let gn = new Float64Array(6);
  const bad = normalEquations(model, params, T, points3d, pixels, res, JtJ, g);
  const rms = (r: Float64Array) => Math.sqrt(sumSq(r) / Math.max(n, 1));
  if (bad >= 0) {
    return {
      T_cam_target: T, rmsPx: NaN, residualsPx: new Float64Array(n).fill(NaN), residualsUvPx: res, iterations: 0, converged: false, status: 'invalid_point',
      message: `point ${bad} cannot be projected at the initial pose`, invalidPoint: bad,
    };
  }
  let cost = 0.5 * sumSq(res);
  let lambda = -1;
  const A = new Float64Array(36);
  const step = new Float64Array(6);
  let iterations = 0;
  let status: RefineStatus = 'no_convergence';
  let message = `stopped after maxIterations = ${o.maxIterations}`;
  while (iterations < o.maxIterations) {
    if (cost === 0) {
      status = 'converged';
      message = 'cost is exactly zero';
      break;
    }
    let maxDiag = 0;
    for (let a = 0; a < 6; a++) maxDiag = Math.max(maxDiag, JtJ[a * 7]!);
    if (lambda < 0) lambda = o.initialLambda;
    A.set(JtJ);
    for (let a = 0; a < 6; a++) A[a * 7]! += lambda * Math.max(JtJ[a * 7]!, 1e-12 * maxDiag);
    iterations++;
    if (choleskyInPlace(A, 6) >= 0) {
      lambda *= 10;
      if (lambda > 1e16) {
        message = 'damped normal equations are not positive definite';
        break;
      }
      continue;
    }
    for (let a = 0; a < 6; a++) step[a] = -g[a]!;
    choleskySolveInPlace(A, 6, step);
    boxPlus(T, step, Tn);
    const badN = normalEquations(model, params, Tn, points3d, pixels, resNew, JtJn, gn);
    const costN = badN >= 0 ? Infinity : 0.5 * sumSq(resNew);
    let stepNorm2 = 0;
    for (let a = 0; a < 6; a++) stepNorm2 += step[a]! * step[a]!;
    const stepNorm = Math.sqrt(stepNorm2);
    const tNorm = Math.hypot(T.t[0]!, T.t[1]!, T.t[2]!);
    if (costN < cost) {
      const decrease = cost - costN;
      [T, Tn] = [Tn, T];
      [res, resNew] = [resNew, res];
      [JtJ, JtJn] = [JtJn, JtJ];
      [g, gn] = [gn, g];
      cost = costN;
      lambda = Math.max(lambda / 10, 1e-16);
      if (decrease <= o.functionTolerance * (cost + decrease)) {
        status = 'converged';
        message = `relative cost decrease ${(decrease / (cost + decrease)).toExponential(2)} ≤ functionTolerance`;
        break;
      }
      if (stepNorm <= o.stepTolerance * (1 + tNorm)) {
        status = 'converged';
        message = `step norm ${stepNorm.toExponential(2)} ≤ stepTolerance·(1 + ‖t‖)`;
        break;
      }
    } else {
      if (stepNorm <= o.stepTolerance * (1 + tNorm)) {
        // No decrease even for a vanishing step: the cost is at its floating-point floor.
        status = 'converged';
        message = `no decrease for a step of norm ${stepNorm.toExponential(2)} ≤ stepTolerance·(1 + ‖t‖)`;
        break;
      }
      lambda *= 10;
      if (lambda > 1e16) {
        status = 'converged';
        message = 'no cost decrease at maximum damping (cost at its numerical floor)';
        break;
      }
    }
  }
  const norms = new Float64Array(n);
  for (let i = 0; i < n; i++) norms[i] = Math.hypot(res[2 * i]!, res[2 * i + 1]!);
  return { T_cam_target: T, rmsPx: rms(res), residualsPx: norms, residualsUvPx: res, iterations, converged: status === 'converged', status, message };
}
