/**
 * Kannala–Brandt camera model: equidistant fisheye projection with an odd
 * polynomial in the incidence angle θ (the four-coefficient radially
 * symmetric part of the generic model).
 *
 * Parameters, in storage order (formats.md): fx fy cx cy k1 k2 k3 k4.
 *
 *   r = √(X² + Y²),  ρ = √(X² + Y² + Z²),  θ = atan2(r, Z) ∈ [0, π]
 *   θ_d = θ (1 + k1 θ² + k2 θ⁴ + k3 θ⁶ + k4 θ⁸)
 *   x_d = θ_d X / r,  y_d = θ_d Y / r      (on the axis θ_d / r → 1/Z)
 *   u = fx·x_d + cx,  v = fy·y_d + cy
 *
 * Source: J. Kannala and S. S. Brandt, "A generic camera model and
 * calibration method for conventional, wide-angle, and fish-eye lenses",
 * IEEE Transactions on Pattern Analysis and Machine Intelligence 28(8), 2006.
 *
 * Valid region: ρ > 0 and θ < θ_max, where θ_max = min(π, √s*) with s* the
 * first positive root of dθ_d/dθ = 1 + 3k1 s + 5k2 s² + 7k3 s³ + 9k4 s⁴
 * (s = θ²). Beyond θ_max the mapping folds back (two directions would share
 * a pixel), so such points are reported invalid. There is no depth limit:
 * points with Z ≤ 0 are valid while θ < θ_max. θ_max is cached per (k1..k4).
 *
 * Jacobians. Write S = θ_d / r (the scale from (X, Y) to (x_d, y_d)) and
 * θ_d' = dθ_d/dθ. With ∂θ/∂r = Z/ρ², ∂θ/∂Z = −r/ρ²:
 *   ∂S/∂X = A·X,  ∂S/∂Y = A·Y,  ∂S/∂Z = −θ_d'/ρ²,   A = (θ_d' Z/ρ² − S)/r²
 *   J_uv_p (2x3) = [[fx(S + A X²), fx A X Y, −fx θ_d' X/ρ²],
 *                   [fy A X Y, fy(S + A Y²), −fy θ_d' Y/ρ²]]
 *   J_uv_intr (2x8), columns fx fy cx cy k1 k2 k3 k4, with T = θ/r:
 *     u: [x_d, 0, 1, 0, fx T X θ², fx T X θ⁴, fx T X θ⁶, fx T X θ⁸]
 *     v: [0, y_d, 0, 1, fy T Y θ², fy T Y θ⁴, fy T Y θ⁶, fy T Y θ⁸]
 *
 * Taylor branch (θ < 1e-4): T and A are 0/0 forms on the optical axis. With
 * r = ρ sin θ and Z = ρ cos θ,
 *   T = (θ / sin θ)/ρ = (1 + θ²/6 + 7θ⁴/360)/ρ + O(θ⁶)
 *   A = (θ_d' cos θ − θ_d / sin θ)/(ρ³ sin² θ)
 *     = ((2k1 − 2/3) + (4k2 − k1 − 1/5) θ²)/ρ³ + O(θ⁴)
 * (series of cos, θ/sin θ and 1/sin² θ multiplied out; the remainder was
 * checked to scale as θ⁴ in 50-digit arithmetic). On the axis S = 1/Z.
 */
import { firstPositiveRoot, LimitCache } from './limits.js';
import type { CameraModel } from './model.js';

export const KANNALA_BRANDT_PARAM_NAMES = ['fx', 'fy', 'cx', 'cy', 'k1', 'k2', 'k3', 'k4'] as const;

/** Below this incidence angle (radians) the Taylor forms of θ/r and A are used. */
const TAYLOR_THETA = 1e-4;

/**
 * θ_max (radians): the largest incidence angle (exclusive) at which the
 * model is valid, min(π, first positive root of dθ_d/dθ). NaN for
 * non-finite coefficients.
 */
export function kannalaBrandtMaxTheta(k1: number, k2: number, k3: number, k4: number): number {
  const s = firstPositiveRoot([1, 3 * k1, 5 * k2, 7 * k3, 9 * k4], Math.PI * Math.PI);
  if (Number.isNaN(s)) return NaN;
  return s === Infinity ? Math.PI : Math.min(Math.PI, Math.sqrt(s));
}

/** θ_d(θ) = θ (1 + k1 θ² + k2 θ⁴ + k3 θ⁶ + k4 θ⁸). */
export function kannalaBrandtThetaD(k1: number, k2: number, k3: number, k4: number, theta: number): number {
  const t2 = theta * theta;
  return theta * (1 + t2 * (k1 + t2 * (k2 + t2 * (k3 + t2 * k4))));
}

/**
 * ρ³·A near the optical axis: (θ_d' cos θ − θ_d / sin θ)/sin² θ expanded as
 * (2k1 − 2/3) + (4k2 − k1 − 1/5) θ² + O(θ⁴), for θ² = theta2.
 */
export function kannalaBrandtAxisSeries(k1: number, k2: number, theta2: number): number {
  return 2 * k1 - 2 / 3 + (4 * k2 - k1 - 0.2) * theta2;
}

const limits = new LimitCache((k1, k2, k3, k4, out) => {
  const tmax = kannalaBrandtMaxTheta(k1, k2, k3, k4);
  out[0] = tmax;
  out[1] = kannalaBrandtThetaD(k1, k2, k3, k4, tmax);
});

function project(
  params: ArrayLike<number>,
  p_cam: ArrayLike<number>,
  uv: Float64Array,
  J_uv_p?: Float64Array,
  J_uv_intr?: Float64Array,
): boolean {
  const X = p_cam[0]!;
  const Y = p_cam[1]!;
  const Z = p_cam[2]!;
  const k1 = params[4]!;
  const k2 = params[5]!;
  const k3 = params[6]!;
  const k4 = params[7]!;
  const r2 = X * X + Y * Y;
  const rho2 = r2 + Z * Z;
  if (!(rho2 > 0)) return false;
  const r = Math.sqrt(r2);
  const theta = Math.atan2(r, Z);
  if (!(theta < limits.lookup(k1, k2, k3, k4))) return false;
  const t2 = theta * theta;
  const poly = 1 + t2 * (k1 + t2 * (k2 + t2 * (k3 + t2 * k4)));
  const taylor = theta < TAYLOR_THETA;
  // T = θ/r, computed without dividing by r near the axis.
  const T = taylor ? (1 + t2 * (1 / 6 + (7 / 360) * t2)) / Math.sqrt(rho2) : theta / r;
  const S = poly * T;
  const xd = S * X;
  const yd = S * Y;
  const fx = params[0]!;
  const fy = params[1]!;
  uv[0] = fx * xd + params[2]!;
  uv[1] = fy * yd + params[3]!;
  if (J_uv_p !== undefined) {
    const dpoly = 1 + t2 * (3 * k1 + t2 * (5 * k2 + t2 * (7 * k3 + 9 * k4 * t2)));
    const irho2 = 1 / rho2;
    let A: number;
    if (taylor) {
      const irho = Math.sqrt(irho2);
      A = kannalaBrandtAxisSeries(k1, k2, t2) * irho * irho2;
    } else {
      A = (dpoly * Z * irho2 - S) / r2;
    }
    const axy = A * X * Y;
    const gz = -dpoly * irho2;
    J_uv_p[0] = fx * (S + A * X * X);
    J_uv_p[1] = fx * axy;
    J_uv_p[2] = fx * gz * X;
    J_uv_p[3] = fy * axy;
    J_uv_p[4] = fy * (S + A * Y * Y);
    J_uv_p[5] = fy * gz * Y;
  }
  if (J_uv_intr !== undefined) {
    const t4 = t2 * t2;
    const gx = fx * T * X;
    const gy = fy * T * Y;
    J_uv_intr[0] = xd;
    J_uv_intr[1] = 0;
    J_uv_intr[2] = 1;
    J_uv_intr[3] = 0;
    J_uv_intr[4] = gx * t2;
    J_uv_intr[5] = gx * t4;
    J_uv_intr[6] = gx * t4 * t2;
    J_uv_intr[7] = gx * t4 * t4;
    J_uv_intr[8] = 0;
    J_uv_intr[9] = yd;
    J_uv_intr[10] = 0;
    J_uv_intr[11] = 1;
    J_uv_intr[12] = gy * t2;
    J_uv_intr[13] = gy * t4;
    J_uv_intr[14] = gy * t4 * t2;
    J_uv_intr[15] = gy * t4 * t4;
  }
  return Number.isFinite(uv[0]!) && Number.isFinite(uv[1]!);
}

const MAX_ITERATIONS = 100;
/** Acceptance: |θ_d(θ) − θ_d| ≤ 1e-13·max(1, θ_d) at the solution. */
const ACCEPT_TOLERANCE = 1e-13;

/**
 * Solves θ_d(θ) = thetaD for θ ∈ [0, θ_max) by Newton's method safeguarded
 * with a bisection bracket (θ_d is strictly increasing there). Returns NaN
 * when thetaD is outside [0, θ_d(θ_max)) or the iteration did not converge.
 */
export function kannalaBrandtSolveTheta(k1: number, k2: number, k3: number, k4: number, thetaD: number): number {
  const tmax = limits.lookup(k1, k2, k3, k4);
  const tdmax = limits.value1;
  if (!(thetaD >= 0 && thetaD < tdmax)) return NaN;
  if (thetaD === 0) return 0;
  let lo = 0;
  let hi = tmax;
  let theta = thetaD < tmax ? thetaD : 0.5 * tmax;
  let f = NaN;
  for (let it = 0; it < MAX_ITERATIONS; it++) {
    const t2 = theta * theta;
    f = theta * (1 + t2 * (k1 + t2 * (k2 + t2 * (k3 + t2 * k4)))) - thetaD;
    if (f === 0) break;
    if (f > 0) hi = theta;
    else lo = theta;
    const df = 1 + t2 * (3 * k1 + t2 * (5 * k2 + t2 * (7 * k3 + 9 * k4 * t2)));
    let next = theta - f / df;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (Math.abs(next - theta) <= 4e-16 * theta) {
      theta = next;
      break;
    }
    theta = next;
  }
  const t2 = theta * theta;
  f = theta * (1 + t2 * (k1 + t2 * (k2 + t2 * (k3 + t2 * k4)))) - thetaD;
  if (!(Math.abs(f) <= ACCEPT_TOLERANCE * Math.max(1, thetaD)) || !(theta < tmax)) return NaN;
  return theta;
}

function unproject(params: ArrayLike<number>, uv: ArrayLike<number>, ray: Float64Array): boolean {
  const mx = (uv[0]! - params[2]!) / params[0]!;
  const my = (uv[1]! - params[3]!) / params[1]!;
  const thetaD = Math.sqrt(mx * mx + my * my);
  if (!Number.isFinite(thetaD)) return false;
  if (thetaD === 0) {
    ray[0] = 0;
    ray[1] = 0;
    ray[2] = 1;
    return true;
  }
  const theta = kannalaBrandtSolveTheta(params[4]!, params[5]!, params[6]!, params[7]!, thetaD);
  if (Number.isNaN(theta)) return false;
  const s = Math.sin(theta) / thetaD;
  ray[0] = s * mx;
  ray[1] = s * my;
  ray[2] = Math.cos(theta);
  return true;
}

const rayScratch = new Float64Array(3);

function unprojectToPlane(params: ArrayLike<number>, uv: ArrayLike<number>, out2: Float64Array): boolean {
  if (!unproject(params, uv, rayScratch)) return false;
  const z = rayScratch[2]!;
  if (!(z > 0)) return false;
  out2[0] = rayScratch[0]! / z;
  out2[1] = rayScratch[1]! / z;
  return true;
}

/** The Kannala–Brandt fisheye model: fx fy cx cy k1 k2 k3 k4. */
export const kannalaBrandt: CameraModel = Object.freeze({
  name: 'kannala-brandt' as const,
  paramNames: KANNALA_BRANDT_PARAM_NAMES,
  numParams: 8,
  numDistortion: 4,
  project,
  unproject,
  unprojectToPlane,
});
