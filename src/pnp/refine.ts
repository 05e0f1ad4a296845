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
import { reprojectionNormalEquations, type PointLoss } from './pose-normal.js';

export interface RefineOptions {
  /** Maximum number of LM iterations (accepted or rejected steps). Default 100. */
  maxIterations?: number;
  /** Stop when (cost_old − cost_new) ≤ functionTolerance · cost_old after an accepted step. Default 1e-14. */
  functionTolerance?: number;
  /** Stop when ‖δ‖ ≤ stepTolerance · (1 + ‖t‖) (δ in rad and metres). Default 1e-14. */
  stepTolerance?: number;
  /** Initial damping relative to max diag(JᵀJ). Default 1e-4. */
  initialLambda?: number;
  /**
   * Robust loss ρ on each point's squared pixel error (e.g. the solver's
   * huberLoss(a), a in pixels): the cost becomes ½ Σ ρ(‖r_i‖²), so a few
   * gross detections cannot pull the pose. Default: none (least squares).
   */
  loss?: PointLoss;
}

export const DEFAULT_REFINE_OPTIONS: Readonly<Required<Omit<RefineOptions, 'loss'>>> = Object.freeze({
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
 * equations JᵀJ (6x6) and g = Jᵀr (pose-normal.ts, unit weights, each point
 * weighted by ρ′ under a loss). Returns the cost ½ Σ ρ(‖r_i‖²) (ρ(s) = s
 * without a loss), or −(i + 1) for the first point i that cannot be projected.
 */
function normalEquations(
  model: CameraModel,
  params: ArrayLike<number>,
  T: Pose,
  points3d: ArrayLike<number>,
  pixels: ArrayLike<number>,
  loss: PointLoss | undefined,
  res: Float64Array,
  JtJ: Float64Array,
  g: Float64Array,
): number {
  const n = points3d.length / 3;
  if (unitWeights.length < n) unitWeights = new Float64Array(n).fill(1);
  // Unit weights as an array rather than null: the rig solver calls the same kernel with
  // weights, and one argument type keeps its optimised code from being thrown away.
  const c = reprojectionNormalEquations(model, params, T, points3d, pixels, unitWeights, loss, JtJ, g, res);
  return c < 0 ? c : 0.5 * c;
}

let unitWeights = new Float64Array(64).fill(1);

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
  const initialCost = normalEquations(model, params, T, points3d, pixels, o.loss, res, JtJ, g);
  const rms = (r: Float64Array) => Math.sqrt(sumSq(r) / Math.max(n, 1));
  if (initialCost < 0) {
    const bad = -initialCost - 1;
    return {
      T_cam_target: T, rmsPx: NaN, residualsPx: new Float64Array(n).fill(NaN), residualsUvPx: res, iterations: 0, converged: false, status: 'invalid_point',
      message: `point ${bad} cannot be projected at the initial pose`, invalidPoint: bad,
    };
  }
  let cost = initialCost;
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
    const cN = normalEquations(model, params, Tn, points3d, pixels, o.loss, resNew, JtJn, gn);
    const costN = cN < 0 ? Infinity : cN;
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
  for (let i = 0; i < n; i++) norms[i] = Math.sqrt(res[2 * i]! * res[2 * i]! + res[2 * i + 1]! * res[2 * i + 1]!);
  return { T_cam_target: T, rmsPx: rms(res), residualsPx: norms, residualsUvPx: res, iterations, converged: status === 'converged', status, message };
}
