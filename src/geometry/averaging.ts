/**
 * Averaging several noisy estimates of one rotation, translation or pose
 * (for example one relative camera pose seen in many frames).
 *
 * Residuals follow the left convention of CONVENTIONS.md: sample i is
 * R_i = exp(v_i)·R̄, so its residual vector is v_i = log(R_i·R̄ᵀ) and its
 * residual angle |v_i| (radians) is the geodesic distance to the average.
 */
import type { Mat3, Vec3 } from '../linalg/small.js';
import { mat3Mul, mat3Transpose } from '../linalg/small.js';
import { nearestRotation } from './nearest-rotation.js';
import type { Pose } from './se3.js';
import { so3Exp, so3Log } from './so3.js';

export interface RotationAverageOptions {
  /** Non-negative weight per sample (default 1 each). */
  weights?: ArrayLike<number>;
  /**
   * 'l1' (default): geodesic L1 median by the Weiszfeld iteration.
   * 'huber': iteratively reweighted geodesic mean with Huber weights min(1, huberScaleRad/|v_i|).
   */
  method?: 'l1' | 'huber';
  /** Huber knee in radians (default 0.01 rad ≈ 0.57°), used by method 'huber'. */
  huberScaleRad?: number;
  /** Residual angle above which a sample is an outlier (default 0.05 rad ≈ 2.9°). */
  thresholdRad?: number;
  /**
   * After the robust estimate, replace it with the weighted geodesic L2 mean of
   * the inliers (statistically more efficient than the median; default true).
   */
  refineOnInliers?: boolean;
  /** Iteration cap for each iterative stage (default 100). */
  maxIterations?: number;
  /** Stop when the update angle falls below this, radians (default 1e-12). */
  toleranceRad?: number;
}

export interface RotationAverage {
  /** The average rotation, row-major 3x3. */
  R: Mat3;
  /** |log(R_i·Rᵀ)| per sample, radians. */
  residualsRad: Float64Array;
  /** residualsRad[i] ≤ thresholdRad. */
  inliers: boolean[];
  /** Iterations of the robust stage. */
  iterations: number;
  /** Whether the robust stage met its tolerance before maxIterations. */
  converged: boolean;
}

function checkSamples(n: number, weights: ArrayLike<number> | undefined, what: string): Float64Array {
  if (n === 0) throw new RangeError(`${what}: no samples`);
  const w = new Float64Array(n);
  if (weights === undefined) {
    w.fill(1);
    return w;
  }
  if (weights.length !== n) throw new RangeError(`${what}: ${weights.length} weights for ${n} samples`);
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const wi = weights[i]!;
    if (!(wi >= 0) || !Number.isFinite(wi)) throw new RangeError(`${what}: weight ${i} is ${wi}, expected a finite number ≥ 0`);
    w[i] = wi;
    sum += wi;
  }
  if (!(sum > 0)) throw new RangeError(`${what}: all weights are zero`);
  return w;
}

/**
 * Chordal L2 mean: the rotation nearest (Frobenius) to Σ w_i R_i, i.e. the
 * minimiser of Σ w_i ‖R − R_i‖²_F (R. Hartley, J. Trumpf, Y. Dai, H. Li,
 * "Rotation averaging", IJCV 103, 2013). Not robust: one gross outlier pulls it.
 */
export function chordalMeanRotation(rotations: readonly ArrayLike<number>[], weights?: ArrayLike<number>): Mat3 {
  const w = checkSamples(rotations.length, weights, 'chordalMeanRotation');
  const S = new Float64Array(9);
  for (let i = 0; i < rotations.length; i++) {
    const Ri = rotations[i]!;
    for (let k = 0; k < 9; k++) S[k]! += w[i]! * Ri[k]!;
  }
  return nearestRotation(S);
}

/** Residual vectors v_i = log(R_i·R̄ᵀ) (n x 3, row-major) and their norms. */
function rotationResiduals(rotations: readonly ArrayLike<number>[], Rbar: Mat3, v: Float64Array, norms: Float64Array): void {
  const RbarT = mat3Transpose(new Float64Array(9), Rbar);
  const D = new Float64Array(9);
  const w = new Float64Array(3);
  for (let i = 0; i < rotations.length; i++) {
    mat3Mul(D, rotations[i]!, RbarT);
    so3Log(D, w);
    v[3 * i] = w[0]!;
    v[3 * i + 1] = w[1]!;
    v[3 * i + 2] = w[2]!;
    norms[i] = Math.hypot(w[0]!, w[1]!, w[2]!);
  }
}

/**
 * Medoid seed: the sample with the smallest weighted sum of chordal distances
 * ‖R_i − R_j‖_F to the others (robust to a minority of outliers). O(n²); for
 * n > 400 a deterministic stride subset of 400 candidates is scored.
 */
function medoidRotation(rotations: readonly ArrayLike<number>[], w: Float64Array): Mat3 {
  const n = rotations.length;
  const stride = Math.max(1, Math.ceil(n / 400));
  let best = 0;
  let bestCost = Infinity;
  for (let i = 0; i < n; i += stride) {
    if (w[i] === 0) continue;
    const Ri = rotations[i]!;
    let cost = 0;
    for (let j = 0; j < n; j++) {
      const Rj = rotations[j]!;
      let d2 = 0;
      for (let k = 0; k < 9; k++) d2 += (Ri[k]! - Rj[k]!) ** 2;
      cost += w[j]! * Math.sqrt(d2);
    }
    if (cost < bestCost) {
      bestCost = cost;
      best = i;
    }
  }
  return Float64Array.from(rotations[best]!);
}

/** A residual shorter than this (radians) means the iterate sits on that sample. */
const VERTEX_EPS_RAD = 1e-12;

/**
 * Vertex test of the Weiszfeld iteration: when the iterate coincides with
 * sample i (|r_i| < eps), it is the L1 minimiser iff |Σ_{j≠i} w_j r_j/|r_j|| ≤ w_i
 * (the subgradient of w_i|r_i| covers the rest). Plain Weiszfeld steps cannot
 * detect this and creep towards such a minimiser only slowly. r is n x 3 row-major.
 */
function atOptimalVertex(r: Float64Array, norms: Float64Array, w: Float64Array, eps: number): boolean {
  const n = norms.length;
  for (let i = 0; i < n; i++) {
    if (!(norms[i]! < eps) || w[i] === 0) continue;
    let gx = 0, gy = 0, gz = 0;
    let wAt = 0;
    for (let j = 0; j < n; j++) {
      if (norms[j]! < eps) {
        wAt += w[j]!;
        continue;
      }
      const k = w[j]! / norms[j]!;
      gx += k * r[3 * j]!;
      gy += k * r[3 * j + 1]!;
      gz += k * r[3 * j + 2]!;
    }
    return Math.hypot(gx, gy, gz) <= wAt;
  }
  return false;
}

/**
 * Iteratively reweighted geodesic mean: R ← exp(Σ ω_i v_i / Σ ω_i)·R with
 * ω_i = w_i·ψ(|v_i|). Returns iterations used and whether the step fell below tol.
 */
function irlsRotation(
  rotations: readonly ArrayLike<number>[],
  w: Float64Array,
  R: Mat3,
  psi: (r: number) => number,
  maxIterations: number,
  tol: number,
  l1 = false,
): { iterations: number; converged: boolean } {
  const n = rotations.length;
  const v = new Float64Array(3 * n);
  const norms = new Float64Array(n);
  const step = new Float64Array(3);
  const E = new Float64Array(9);
  for (let it = 1; it <= maxIterations; it++) {
    rotationResiduals(rotations, R, v, norms);
    if (l1 && atOptimalVertex(v, norms, w, VERTEX_EPS_RAD)) return { iterations: it, converged: true };
    step.fill(0);
    let den = 0;
    for (let i = 0; i < n; i++) {
      const wi = w[i]! * psi(norms[i]!);
      if (!(wi > 0)) continue;
      step[0]! += wi * v[3 * i]!;
      step[1]! += wi * v[3 * i + 1]!;
      step[2]! += wi * v[3 * i + 2]!;
      den += wi;
    }
    if (!(den > 0)) return { iterations: it, converged: true };
    step[0]! /= den;
    step[1]! /= den;
    step[2]! /= den;
    so3Exp(step, E);
    mat3Mul(R, E, R);
    if (Math.hypot(step[0]!, step[1]!, step[2]!) < tol) return { iterations: it, converged: true };
  }
  return { iterations: maxIterations, converged: false };
}

/**
 * Robust average of rotations.
 *
 * 'l1' minimises Σ w_i |log(R_i·Rᵀ)| by the Weiszfeld iteration on SO(3)
 * (R. Hartley, K. Aftab, J. Trumpf, "L1 rotation averaging using the Weiszfeld
 * algorithm", CVPR 2011): weights w_i/|v_i|, samples with |v_i| < 1e-12 are
 * skipped in that step (the standard guard against division by zero), and
 * an iterate sitting on a sample stops there when that sample satisfies the
 * L1 optimality (subgradient) condition.
 * 'huber' uses weights w_i·min(1, k/|v_i|).
 * Both start from the medoid sample. With refineOnInliers (default) the result is
 * then the weighted geodesic L2 (Karcher) mean of the samples within thresholdRad.
 */
export function robustMeanRotation(rotations: readonly ArrayLike<number>[], options: RotationAverageOptions = {}): RotationAverage {
  const w = checkSamples(rotations.length, options.weights, 'robustMeanRotation');
  const threshold = options.thresholdRad ?? 0.05;
  const maxIt = options.maxIterations ?? 100;
  const tol = options.toleranceRad ?? 1e-12;
  const k = options.huberScaleRad ?? 0.01;
  const psi =
    options.method !== 'huber'
      ? (r: number) => (r < 1e-12 ? 0 : 1 / r)
      : (r: number) => (r <= k ? 1 : k / r);
  const l1 = (options.method ?? 'l1') === 'l1';
  const R = medoidRotation(rotations, w);
  const robust = irlsRotation(rotations, w, R, psi, maxIt, tol, l1);
  const n = rotations.length;
  const v = new Float64Array(3 * n);
  const norms = new Float64Array(n);
  rotationResiduals(rotations, R, v, norms);
  if (options.refineOnInliers ?? true) {
    const wIn = new Float64Array(n);
    let any = false;
    for (let i = 0; i < n; i++) {
      if (norms[i]! <= threshold && w[i]! > 0) {
        wIn[i] = w[i]!;
        any = true;
      }
    }
    if (any) {
      irlsRotation(rotations, wIn, R, () => 1, maxIt, tol);
      rotationResiduals(rotations, R, v, norms);
    }
  }
  const inliers = Array.from(norms, (r) => r <= threshold);
  return { R, residualsRad: norms, inliers, iterations: robust.iterations, converged: robust.converged };
}

export interface TranslationAverageOptions {
  /** Non-negative weight per sample (default 1 each). */
  weights?: ArrayLike<number>;
  /** Distance from the average above which a sample is an outlier, metres (default 0.01 m). */
  thresholdM?: number;
  /** After the geometric median, replace it with the weighted mean of the inliers (default true). */
  refineOnInliers?: boolean;
  /** Weiszfeld iteration cap (default 200). */
  maxIterations?: number;
  /** Stop when the update is shorter than this, metres (default 1e-12). */
  toleranceM?: number;
}

export interface TranslationAverage {
  t: Vec3;
  /** |t_i − t| per sample, metres. */
  residualsM: Float64Array;
  inliers: boolean[];
  iterations: number;
  converged: boolean;
}

/** Weighted median: the smallest value whose cumulative weight reaches half the total (weights > 0). */
function weightedMedian(values: number[], weights: number[]): number {
  const idx = values.map((_, i) => i).sort((a, b) => values[a]! - values[b]!);
  const total = weights.reduce((a, b) => a + b, 0);
  let acc = 0;
  for (const i of idx) {
    acc += weights[i]!;
    if (acc >= 0.5 * total) return values[i]!;
  }
  return values[idx[idx.length - 1]!]!;
}

/**
 * Weighted geometric median argmin_t Σ w_i |t_i − t| by the Weiszfeld
 * iteration t ← Σ (w_i/|t_i − t|) t_i / Σ (w_i/|t_i − t|), started from the
 * component-wise weighted median. A sample that coincides with the iterate
 * (distance < 1e-14 of the coordinates' scale) is skipped in that step, and the
 * iteration stops on it when it satisfies the L1 optimality condition
 * |Σ_{j≠i} w_j (t_j − t)/|t_j − t|| ≤ w_i.
 */
export function geometricMedian(
  points: readonly ArrayLike<number>[],
  weights?: ArrayLike<number>,
  maxIterations = 200,
  toleranceM = 1e-12,
): { t: Vec3; iterations: number; converged: boolean } {
  const w = checkSamples(points.length, weights, 'geometricMedian');
  const t = new Float64Array(3);
  for (let c = 0; c < 3; c++) {
    const vals: number[] = [];
    const ws: number[] = [];
    for (let i = 0; i < points.length; i++) {
      if (w[i]! > 0) {
        vals.push(points[i]![c]!);
        ws.push(w[i]!);
      }
    }
    t[c] = weightedMedian(vals, ws);
  }
  let scale = 0;
  for (const p of points) scale = Math.max(scale, Math.abs(p[0]!), Math.abs(p[1]!), Math.abs(p[2]!));
  const eps = 1e-14 * Math.max(scale, 1);
  const r = new Float64Array(3 * points.length);
  const norms = new Float64Array(points.length);
  for (let it = 1; it <= maxIterations; it++) {
    for (let i = 0; i < points.length; i++) {
      const p = points[i]!;
      r[3 * i] = p[0]! - t[0]!;
      r[3 * i + 1] = p[1]! - t[1]!;
      r[3 * i + 2] = p[2]! - t[2]!;
      norms[i] = Math.hypot(r[3 * i]!, r[3 * i + 1]!, r[3 * i + 2]!);
    }
    if (atOptimalVertex(r, norms, w, eps)) return { t, iterations: it, converged: true };
    let den = 0;
    const num = [0, 0, 0];
    for (let i = 0; i < points.length; i++) {
      const p = points[i]!;
      const d = norms[i]!;
      if (d < eps || w[i] === 0) continue;
      const wi = w[i]! / d;
      num[0]! += wi * p[0]!;
      num[1]! += wi * p[1]!;
      num[2]! += wi * p[2]!;
      den += wi;
    }
    if (!(den > 0)) return { t, iterations: it, converged: true };
    const nx = num[0]! / den, ny = num[1]! / den, nz = num[2]! / den;
    const moved = Math.hypot(nx - t[0]!, ny - t[1]!, nz - t[2]!);
    t[0] = nx;
    t[1] = ny;
    t[2] = nz;
    if (moved < toleranceM) return { t, iterations: it, converged: true };
  }
  return { t, iterations: maxIterations, converged: false };
}

/** Plain weighted mean Σ w_i t_i / Σ w_i (not robust). */
export function meanTranslation(points: readonly ArrayLike<number>[], weights?: ArrayLike<number>): Vec3 {
  const w = checkSamples(points.length, weights, 'meanTranslation');
  const t = new Float64Array(3);
  let den = 0;
  for (let i = 0; i < points.length; i++) {
    const p = points[i]!;
    t[0]! += w[i]! * p[0]!;
    t[1]! += w[i]! * p[1]!;
    t[2]! += w[i]! * p[2]!;
    den += w[i]!;
  }
  t[0]! /= den;
  t[1]! /= den;
  t[2]! /= den;
  return t;
}

/** Robust translation average: geometric median, inlier mask, optional inlier mean. */
export function robustMeanTranslation(points: readonly ArrayLike<number>[], options: TranslationAverageOptions = {}): TranslationAverage {
  const w = checkSamples(points.length, options.weights, 'robustMeanTranslation');
  const threshold = options.thresholdM ?? 0.01;
  const gm = geometricMedian(points, w, options.maxIterations ?? 200, options.toleranceM ?? 1e-12);
  let t = gm.t;
  const dist = (c: Vec3) => Float64Array.from(points, (p) => Math.hypot(p[0]! - c[0]!, p[1]! - c[1]!, p[2]! - c[2]!));
  let residuals = dist(t);
  if (options.refineOnInliers ?? true) {
    const wIn = Float64Array.from(w, (wi, i) => (residuals[i]! <= threshold ? wi : 0));
    if (wIn.some((x) => x > 0)) {
      t = meanTranslation(points, wIn);
      residuals = dist(t);
    }
  }
  return { t, residualsM: residuals, inliers: Array.from(residuals, (r) => r <= threshold), iterations: gm.iterations, converged: gm.converged };
}

export interface PoseAverageOptions {
  weights?: ArrayLike<number>;
  rotation?: Omit<RotationAverageOptions, 'weights'>;
  translation?: Omit<TranslationAverageOptions, 'weights'>;
}

export interface PoseAverage {
  T: Pose;
  rotationResidualsRad: Float64Array;
  translationResidualsM: Float64Array;
  /** Inlier in rotation AND in translation. */
  inliers: boolean[];
  converged: boolean;
}

/**
 * Robust average of several estimates T_i of one pose (e.g. a relative
 * camera pose T_cam0_cam1 seen in many frames). The rotation is averaged with
 * robustMeanRotation; the translation with robustMeanTranslation. The
 * translation refinement uses only samples that are inliers in rotation too,
 * so a frame with a bad rotation does not pull the translation.
 */
export function averagePoses(poses: readonly Pose[], options: PoseAverageOptions = {}): PoseAverage {
  const w = checkSamples(poses.length, options.weights, 'averagePoses');
  const rot = robustMeanRotation(
    poses.map((p) => p.R),
    { ...options.rotation, weights: w },
  );
  const wt = Float64Array.from(w, (wi, i) => (rot.inliers[i] ? wi : 0));
  const tw = wt.some((x) => x > 0) ? wt : w;
  const tr = robustMeanTranslation(
    poses.map((p) => p.t),
    { ...options.translation, weights: tw },
  );
  return {
    T: { R: rot.R, t: tr.t },
    rotationResidualsRad: rot.residualsRad,
    translationResidualsM: tr.residualsM,
    inliers: rot.inliers.map((ok, i) => ok && tr.inliers[i]!),
    converged: rot.converged && tr.converged,
  };
}
