/**
 * SO(3): rotations as row-major 3x3 matrices (Float64Array(9)).
 * Tangent vectors are rotation vectors ω (radians, axis·angle).
 * Perturbation convention (see CONVENTIONS.md): left, R ← exp(δ)·R.
 */
import { mat3Identity, skew, type Mat3, type Vec3 } from '../linalg/small.js';

/** Below this angle the Taylor branches are used (θ² terms cancel badly). */
const SMALL_ANGLE = 1e-4;

/**
 * Rodrigues' formula: exp([ω]×) = I + (sin θ/θ)[ω]× + ((1 − cos θ)/θ²)[ω]×², θ = |ω|.
 * Taylor branch for θ < 1e-4: sin θ/θ ≈ 1 − θ²/6, (1 − cos θ)/θ² ≈ 1/2 − θ²/24.
 */
export function so3Exp(omega: ArrayLike<number>, out: Mat3 = new Float64Array(9)): Mat3 {
  const x = omega[0]!, y = omega[1]!, z = omega[2]!;
  const th2 = x * x + y * y + z * z;
  let a: number;
  let b: number;
  if (th2 < SMALL_ANGLE * SMALL_ANGLE) {
    a = 1 - th2 / 6;
    b = 0.5 - th2 / 24;
  } else {
    const th = Math.sqrt(th2);
    const sh = Math.sin(0.5 * th);
    a = Math.sin(th) / th;
    // 1 − cos θ = 2 sin²(θ/2), without the cancellation of 1 − cos θ at small θ.
    b = (2 * sh * sh) / th2;
  }
  // [ω]×² = ωωᵀ − θ² I
  out[0] = 1 + b * (x * x - th2);
  out[1] = -a * z + b * x * y;
  out[2] = a * y + b * x * z;
  out[3] = a * z + b * x * y;
  out[4] = 1 + b * (y * y - th2);
  out[5] = -a * x + b * y * z;
  out[6] = -a * y + b * x * z;
  out[7] = a * x + b * y * z;
  out[8] = 1 + b * (z * z - th2);
  return out;
}

/**
 * Logarithm: the rotation vector ω with exp([ω]×) = R, |ω| ∈ [0, π].
 * Stable near 0 (Taylor: ω ≈ vee(R − Rᵀ)/2 · (1 + θ²/6)) and near π, where
 * sin θ → 0 and the axis is recovered from the symmetric part R + Rᵀ = 2 nnᵀ + (…)I
 * instead of the vanishing antisymmetric part.
 */
export function so3Log(R: ArrayLike<number>, out: Vec3 = new Float64Array(3)): Vec3 {
  const tr = R[0]! + R[4]! + R[8]!;
  let cosT = 0.5 * (tr - 1);
  if (cosT > 1) cosT = 1;
  if (cosT < -1) cosT = -1;
  // 2 sin θ · n = vee(R − Rᵀ)
  const vx = R[7]! - R[5]!;
  const vy = R[2]! - R[6]!;
  const vz = R[3]! - R[1]!;
  const sin2 = Math.sqrt(vx * vx + vy * vy + vz * vz); // = 2 sin θ
  const theta = Math.atan2(0.5 * sin2, cosT);
  if (theta < SMALL_ANGLE) {
    const k = 0.5 * (1 + (theta * theta) / 6);
    out[0] = k * vx;
    out[1] = k * vy;
    out[2] = k * vz;
    return out;
  }
  if (Math.PI - theta > 1e-3) {
    const k = theta / sin2;
    out[0] = k * vx;
    out[1] = k * vy;
    out[2] = k * vz;
    return out;
  }
  // Near π: R = cos θ I + sin θ [n]× + (1 − cos θ) nnᵀ. Take n from the largest
  // diagonal entry of the symmetric part, then fix its sign with the
  // antisymmetric part (sign of sin θ · n).
  const oneMinusCos = 1 - cosT;
  const d0 = (R[0]! - cosT) / oneMinusCos;
  const d1 = (R[4]! - cosT) / oneMinusCos;
  const d2 = (R[8]! - cosT) / oneMinusCos;
  let nx: number, ny: number, nz: number;
  if (d0 >= d1 && d0 >= d2) {
    nx = Math.sqrt(Math.max(d0, 0));
    ny = (R[1]! + R[3]!) / (2 * oneMinusCos * nx);
    nz = (R[2]! + R[6]!) / (2 * oneMinusCos * nx);
  } else if (d1 >= d2) {
    ny = Math.sqrt(Math.max(d1, 0));
    nx = (R[1]! + R[3]!) / (2 * oneMinusCos * ny);
    nz = (R[5]! + R[7]!) / (2 * oneMinusCos * ny);
  } else {
    nz = Math.sqrt(Math.max(d2, 0));
    nx = (R[2]! + R[6]!) / (2 * oneMinusCos * nz);
    ny = (R[5]! + R[7]!) / (2 * oneMinusCos * nz);
  }
  const nn = Math.sqrt(nx * nx + ny * ny + nz * nz);
  nx /= nn;
  ny /= nn;
  nz /= nn;
  if (nx * vx + ny * vy + nz * vz < 0) {
    nx = -nx;
    ny = -ny;
    nz = -nz;
  }
  out[0] = theta * nx;
  out[1] = theta * ny;
  out[2] = theta * nz;
  return out;
}

/**
 * Left Jacobian of SO(3): J_l(ω) = I + ((1 − cos θ)/θ²)[ω]× + ((θ − sin θ)/θ³)[ω]×².
 * exp(ω + δ) ≈ exp(J_l(ω) δ) exp(ω) for small δ.
 */
export function so3LeftJacobian(omega: ArrayLike<number>, out: Mat3 = new Float64Array(9)): Mat3 {
  const x = omega[0]!, y = omega[1]!, z = omega[2]!;
  const th2 = x * x + y * y + z * z;
  let a: number;
  let b: number;
  if (th2 < SMALL_ANGLE * SMALL_ANGLE) {
    a = 0.5 - th2 / 24;
    b = 1 / 6 - th2 / 120;
  } else {
    const th = Math.sqrt(th2);
    const sh = Math.sin(0.5 * th);
    a = (2 * sh * sh) / th2;
    b = (th - Math.sin(th)) / (th2 * th);
  }
  out[0] = 1 + b * (x * x - th2);
  out[1] = -a * z + b * x * y;
  out[2] = a * y + b * x * z;
  out[3] = a * z + b * x * y;
  out[4] = 1 + b * (y * y - th2);
  out[5] = -a * x + b * y * z;
  out[6] = -a * y + b * x * z;
  out[7] = a * x + b * y * z;
  out[8] = 1 + b * (z * z - th2);
  return out;
}

/**
 * Inverse of the left Jacobian: J_l⁻¹(ω) = I − ½[ω]× + (1/θ² − (1 + cos θ)/(2θ sin θ))[ω]×²,
 * with (1 + cos θ)/sin θ = cot(θ/2), which stays finite at θ = π (where sin θ → 0).
 * Taylor branch for θ < 1e-2: 1/12 + θ²/720 + θ⁴/30240 (the closed form loses ~1e-7
 * relative there to cancellation between 1/θ² and cot(θ/2)/(2θ)).
 */
export function so3LeftJacobianInverse(omega: ArrayLike<number>, out: Mat3 = new Float64Array(9)): Mat3 {
  const x = omega[0]!, y = omega[1]!, z = omega[2]!;
  const th2 = x * x + y * y + z * z;
  let c: number;
  if (th2 < 1e-4) {
    c = 1 / 12 + th2 / 720 + (th2 * th2) / 30240;
  } else {
    const th = Math.sqrt(th2);
    c = 1 / th2 - 1 / (2 * th * Math.tan(0.5 * th));
  }
  const a = -0.5;
  out[0] = 1 + c * (x * x - th2);
  out[1] = -a * z + c * x * y;
  out[2] = a * y + c * x * z;
  out[3] = a * z + c * x * y;
  out[4] = 1 + c * (y * y - th2);
  out[5] = -a * x + c * y * z;
  out[6] = -a * y + c * x * z;
  out[7] = a * x + c * y * z;
  out[8] = 1 + c * (z * z - th2);
  return out;
}

/**
 * q = R p. J_q_R (3x3, left perturbation R ← exp(δ)R): −[q]×. J_q_p (3x3): R.
 */
export function so3Act(R: ArrayLike<number>, p: ArrayLike<number>, out: Vec3 = new Float64Array(3), J_q_R?: Float64Array, J_q_p?: Float64Array): Vec3 {
  const x = p[0]!, y = p[1]!, z = p[2]!;
  const qx = R[0]! * x + R[1]! * y + R[2]! * z;
  const qy = R[3]! * x + R[4]! * y + R[5]! * z;
  const qz = R[6]! * x + R[7]! * y + R[8]! * z;
  out[0] = qx;
  out[1] = qy;
  out[2] = qz;
  if (J_q_R) {
    J_q_R[0] = 0; J_q_R[1] = qz; J_q_R[2] = -qy;
    J_q_R[3] = -qz; J_q_R[4] = 0; J_q_R[5] = qx;
    J_q_R[6] = qy; J_q_R[7] = -qx; J_q_R[8] = 0;
  }
  if (J_q_p) for (let i = 0; i < 9; i++) J_q_p[i] = R[i]!;
  return out;
}

/** vee: the vector w of a skew-symmetric matrix [w]× (row-major), w = (M21, M02, M10). */
export function so3Vee(M: ArrayLike<number>, out: Vec3 = new Float64Array(3)): Vec3 {
  out[0] = M[7]!;
  out[1] = M[2]!;
  out[2] = M[3]!;
  return out;
}

/** The rotation angle |log(R)| in [0, π], radians. */
export function so3Angle(R: ArrayLike<number>): number {
  const w = so3Log(R);
  return Math.sqrt(w[0]! * w[0]! + w[1]! * w[1]! + w[2]! * w[2]!);
}

/** The nearest rotation (Frobenius norm) to an arbitrary 3x3 matrix, via SVD: U diag(1,1,det(UVᵀ)) Vᵀ. */
export { nearestRotation } from './nearest-rotation.js';

export { mat3Identity as so3Identity, skew as so3Hat };
