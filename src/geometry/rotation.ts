/**
 * Conversions between rotation representations (see CONVENTIONS.md):
 * row-major 3x3 matrices, unit quaternions [w, x, y, z] with w ≥ 0,
 * rotation vectors (radians), roll-pitch-yaw (radians, URDF:
 * R = Rz(yaw)·Ry(pitch)·Rx(roll)) and 4x4 homogeneous matrices (row-major).
 */
import type { Mat3, Vec3 } from '../linalg/small.js';
import type { Pose } from './se3.js';

/** A quaternion [w, x, y, z]. */
export type QuatWxyz = Float64Array;

/** Below this |v| (sine of half the angle) quaternion → rotation vector uses its Taylor branch. */
const QUAT_SMALL = 1e-6;
/** cos(pitch) below this is treated as gimbal lock in matrixToRpy. */
export const GIMBAL_LOCK_COS_PITCH = 1e-10;

/**
 * Rescales q to unit norm and flips its sign so that w ≥ 0 (in place). When w is
 * exactly 0 (a rotation by π) the first non-zero of x, y, z is made positive, so
 * every rotation has one stored quaternion. Throws RangeError for a zero quaternion.
 */
export function quatNormalize(q: Float64Array): QuatWxyz {
  const n = Math.hypot(q[0]!, q[1]!, q[2]!, q[3]!);
  if (!(n > 0) || !Number.isFinite(n)) throw new RangeError(`quaternion [${Array.from(q).join(', ')}] cannot be normalised`);
  const lead = q[0] !== 0 ? q[0]! : q[1] !== 0 ? q[1]! : q[2] !== 0 ? q[2]! : q[3]!;
  const s = lead < 0 ? -1 / n : 1 / n;
  q[0]! *= s;
  q[1]! *= s;
  q[2]! *= s;
  q[3]! *= s;
  return q;
}

/**
 * Rotation matrix → unit quaternion [w, x, y, z], w ≥ 0.
 * Shepperd's method: of the four expressions 4w² = 1 + tr, 4x² = 1 + 2R00 − tr, …,
 * the largest is used for the square root and the other three components come
 * from sums/differences of off-diagonal entries divided by it, so no division
 * by a small number occurs (S. W. Shepperd, "Quaternion from rotation matrix",
 * J. Guidance and Control 1(3), 1978).
 */
export function matrixToQuat(R: ArrayLike<number>, out: QuatWxyz = new Float64Array(4)): QuatWxyz {
  const r00 = R[0]!, r01 = R[1]!, r02 = R[2]!, r10 = R[3]!, r11 = R[4]!, r12 = R[5]!, r20 = R[6]!, r21 = R[7]!, r22 = R[8]!;
  const tr = r00 + r11 + r22;
  let w: number, x: number, y: number, z: number;
  if (tr >= r00 && tr >= r11 && tr >= r22) {
    const s = 2 * Math.sqrt(Math.max(1 + tr, 0)); // s = 4w
    w = 0.25 * s;
    x = (r21 - r12) / s;
    y = (r02 - r20) / s;
    z = (r10 - r01) / s;
  } else if (r00 >= r11 && r00 >= r22) {
    const s = 2 * Math.sqrt(Math.max(1 + r00 - r11 - r22, 0)); // s = 4x
    w = (r21 - r12) / s;
    x = 0.25 * s;
    y = (r01 + r10) / s;
    z = (r02 + r20) / s;
  } else if (r11 >= r22) {
    const s = 2 * Math.sqrt(Math.max(1 + r11 - r00 - r22, 0)); // s = 4y
    w = (r02 - r20) / s;
    x = (r01 + r10) / s;
    y = 0.25 * s;
    z = (r12 + r21) / s;
  } else {
    const s = 2 * Math.sqrt(Math.max(1 + r22 - r00 - r11, 0)); // s = 4z
    w = (r10 - r01) / s;
    x = (r02 + r20) / s;
    y = (r12 + r21) / s;
    z = 0.25 * s;
  }
  out[0] = w;
  out[1] = x;
  out[2] = y;
  out[3] = z;
  return quatNormalize(out);
}

/**
 * Unit quaternion [w, x, y, z] → rotation matrix (row-major). The input is
 * normalised first, so any non-zero quaternion is accepted; q and −q give the same R.
 * R = [[1−2(y²+z²), 2(xy−wz), 2(xz+wy)], [2(xy+wz), 1−2(x²+z²), 2(yz−wx)], [2(xz−wy), 2(yz+wx), 1−2(x²+y²)]].
 */
export function quatToMatrix(q: ArrayLike<number>, out: Mat3 = new Float64Array(9)): Mat3 {
  const n = Math.hypot(q[0]!, q[1]!, q[2]!, q[3]!);
  if (!(n > 0) || !Number.isFinite(n)) throw new RangeError(`quaternion [${Array.from(q).join(', ')}] cannot be normalised`);
  const w = q[0]! / n, x = q[1]! / n, y = q[2]! / n, z = q[3]! / n;
  out[0] = 1 - 2 * (y * y + z * z);
  out[1] = 2 * (x * y - w * z);
  out[2] = 2 * (x * z + w * y);
  out[3] = 2 * (x * y + w * z);
  out[4] = 1 - 2 * (x * x + z * z);
  out[5] = 2 * (y * z - w * x);
  out[6] = 2 * (x * z - w * y);
  out[7] = 2 * (y * z + w * x);
  out[8] = 1 - 2 * (x * x + y * y);
  return out;
}

/**
 * Rotation vector ω (radians) → quaternion [cos(θ/2), sin(θ/2) ω/θ], then sign-fixed to w ≥ 0.
 * Taylor branch for θ < 1e-6: sin(θ/2)/θ ≈ 1/2 − θ²/48.
 */
export function rotvecToQuat(omega: ArrayLike<number>, out: QuatWxyz = new Float64Array(4)): QuatWxyz {
  const x = omega[0]!, y = omega[1]!, z = omega[2]!;
  const th = Math.sqrt(x * x + y * y + z * z);
  const k = th < QUAT_SMALL ? 0.5 - (th * th) / 48 : Math.sin(0.5 * th) / th;
  out[0] = Math.cos(0.5 * th);
  out[1] = k * x;
  out[2] = k * y;
  out[3] = k * z;
  return quatNormalize(out);
}

/**
 * Quaternion → rotation vector with angle in [0, π]: after sign-fixing w ≥ 0,
 * θ = 2·atan2(|v|, w), ω = θ v/|v| (atan2 keeps full accuracy near θ = 0 and θ = π).
 * Taylor branch for |v| < 1e-6: ω ≈ (2/w)(1 − |v|²/(3w²)) v.
 */
export function quatToRotvec(q: ArrayLike<number>, out: Vec3 = new Float64Array(3)): Vec3 {
  const u = quatNormalize(Float64Array.from(q));
  const w = u[0]!, x = u[1]!, y = u[2]!, z = u[3]!;
  const n = Math.sqrt(x * x + y * y + z * z);
  const k = n < QUAT_SMALL ? (2 / w) * (1 - (n * n) / (3 * w * w)) : (2 * Math.atan2(n, w)) / n;
  out[0] = k * x;
  out[1] = k * y;
  out[2] = k * z;
  return out;
}

/** Hamilton product a ⊗ b of quaternions [w, x, y, z] (R(a⊗b) = R(a)·R(b)); not sign-fixed. */
export function quatMul(a: ArrayLike<number>, b: ArrayLike<number>, out: QuatWxyz = new Float64Array(4)): QuatWxyz {
  const aw = a[0]!, ax = a[1]!, ay = a[2]!, az = a[3]!, bw = b[0]!, bx = b[1]!, by = b[2]!, bz = b[3]!;
  out[0] = aw * bw - ax * bx - ay * by - az * bz;
  out[1] = aw * bx + ax * bw + ay * bz - az * by;
  out[2] = aw * by - ax * bz + ay * bw + az * bx;
  out[3] = aw * bz + ax * by - ay * bx + az * bw;
  return out;
}

/**
 * Roll, pitch, yaw (radians) → R = Rz(yaw)·Ry(pitch)·Rx(roll) (URDF fixed axes X, then Y, then Z):
 * R = [[cy cp, cy sp sr − sy cr, cy sp cr + sy sr],
 *      [sy cp, sy sp sr + cy cr, sy sp cr − cy sr],
 *      [−sp,   cp sr,            cp cr]].
 */
export function rpyToMatrix(roll: number, pitch: number, yaw: number, out: Mat3 = new Float64Array(9)): Mat3 {
  const sr = Math.sin(roll), cr = Math.cos(roll);
  const sp = Math.sin(pitch), cp = Math.cos(pitch);
  const sy = Math.sin(yaw), cy = Math.cos(yaw);
  out[0] = cy * cp;
  out[1] = cy * sp * sr - sy * cr;
  out[2] = cy * sp * cr + sy * sr;
  out[3] = sy * cp;
  out[4] = sy * sp * sr + cy * cr;
  out[5] = sy * sp * cr - cy * sr;
  out[6] = -sp;
  out[7] = cp * sr;
  out[8] = cp * cr;
  return out;
}

/**
 * R → [roll, pitch, yaw] (radians) with R = Rz(yaw)·Ry(pitch)·Rx(roll);
 * roll, yaw ∈ (−π, π], pitch ∈ [−π/2, π/2].
 *
 * pitch = atan2(−R20, hypot(R21, R22)); roll = atan2(R21, R22). Yaw is then
 * read from the second column of R·Rx(roll)ᵀ = Rz(yaw)·Ry(pitch), whose
 * entries are (−sin yaw, cos yaw, 0): yaw = atan2(R02 sr − R01 cr, R11 cr − R12 sr).
 * That column does not involve cos(pitch), so yaw stays accurate near gimbal lock.
 *
 * Gimbal lock (cos(pitch) < 1e-10, i.e. pitch = ±π/2): only roll − yaw
 * (pitch = +π/2) or roll + yaw (pitch = −π/2) is defined. We pick roll = 0
 * and put the whole remaining angle in yaw = atan2(−R01, R11).
 */
export function matrixToRpy(R: ArrayLike<number>, out: Float64Array = new Float64Array(3)): Float64Array {
  const cp = Math.hypot(R[7]!, R[8]!);
  const pitch = Math.atan2(-R[6]!, cp);
  let roll = 0;
  if (cp >= GIMBAL_LOCK_COS_PITCH) roll = Math.atan2(R[7]!, R[8]!);
  const sr = Math.sin(roll), cr = Math.cos(roll);
  const yaw = Math.atan2(R[2]! * sr - R[1]! * cr, R[4]! * cr - R[5]! * sr);
  out[0] = roll === -Math.PI ? Math.PI : roll;
  out[1] = pitch;
  out[2] = yaw === -Math.PI ? Math.PI : yaw;
  return out;
}

/** Pose → 4x4 homogeneous matrix, row-major: [[R, t], [0 0 0 1]]. */
export function poseToMatrix4(T: Pose, out: Float64Array = new Float64Array(16)): Float64Array {
  for (let i = 0; i < 3; i++) {
    out[i * 4] = T.R[i * 3]!;
    out[i * 4 + 1] = T.R[i * 3 + 1]!;
    out[i * 4 + 2] = T.R[i * 3 + 2]!;
    out[i * 4 + 3] = T.t[i]!;
  }
  out[12] = 0;
  out[13] = 0;
  out[14] = 0;
  out[15] = 1;
  return out;
}

/**
 * 4x4 homogeneous matrix (row-major, 16 numbers) → Pose (copies R and t).
 * Throws RangeError when the length is not 16 or the last row is not [0 0 0 1]
 * within 1e-9 (a column-major matrix passed by mistake usually fails this).
 */
export function poseFromMatrix4(M: ArrayLike<number>): Pose {
  if (M.length !== 16) throw new RangeError(`poseFromMatrix4: expected 16 numbers (row-major 4x4), got ${M.length}`);
  const last = [M[12]!, M[13]!, M[14]!, M[15]!];
  if (Math.abs(last[0]!) > 1e-9 || Math.abs(last[1]!) > 1e-9 || Math.abs(last[2]!) > 1e-9 || Math.abs(last[3]! - 1) > 1e-9) {
    throw new RangeError(`poseFromMatrix4: last row is [${last.join(', ')}], expected [0, 0, 0, 1]; is the matrix column-major?`);
  }
  const R = new Float64Array(9);
  const t = new Float64Array(3);
  for (let i = 0; i < 3; i++) {
    R[i * 3] = M[i * 4]!;
    R[i * 3 + 1] = M[i * 4 + 1]!;
    R[i * 3 + 2] = M[i * 4 + 2]!;
    t[i] = M[i * 4 + 3]!;
  }
  return { R, t };
}
