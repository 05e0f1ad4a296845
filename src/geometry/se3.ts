/**
 * SE(3): rigid transforms T_a_b = (R_a_b, t_a_b), mapping p_a = R_a_b p_b + t_a_b.
 * R is a row-major 3x3 Float64Array(9), t a Float64Array(3).
 *
 * Tangent vectors are 6-vectors δ = [rx ry rz tx ty tz] (rotation first),
 * applied on the left in the parent frame: T ← exp(δ)·T. See CONVENTIONS.md.
 */
import {
  mat3Mul,
  mat3MulVec,
  mat3Transpose,
  mat3Identity,
  type Mat3,
  type Vec3,
} from '../linalg/small.js';
import { so3Exp, so3LeftJacobian, so3LeftJacobianInverse, so3Log } from './so3.js';

export interface Pose {
  /** Rotation R_a_b, row-major 3x3. */
  R: Mat3;
  /** Translation t_a_b (position of b's origin in a), metres. */
  t: Vec3;
}

export function poseIdentity(): Pose {
  return { R: mat3Identity(), t: new Float64Array(3) };
}

export function poseClone(T: Pose): Pose {
  return { R: Float64Array.from(T.R), t: Float64Array.from(T.t) };
}

export function poseFrom(R: ArrayLike<number>, t: ArrayLike<number>): Pose {
  return { R: Float64Array.from(R), t: Float64Array.from(t) };
}

/**
 * T_a_c = T_a_b · T_b_c. out may alias either input.
 * J_Tac_Tab (6x6, left perturbation of T_a_b): I.
 * J_Tac_Tbc (6x6, left perturbation of T_b_c): Ad(T_a_b).
 */
export function compose(T_a_b: Pose, T_b_c: Pose, out: Pose = poseIdentity(), J_Tac_Tab?: Float64Array, J_Tac_Tbc?: Float64Array): Pose {
  if (J_Tac_Tab) {
    J_Tac_Tab.fill(0);
    for (let i = 0; i < 6; i++) J_Tac_Tab[i * 7] = 1;
  }
  if (J_Tac_Tbc) adjoint(T_a_b, J_Tac_Tbc);
  // Scalars first, so that out may alias either input without a temporary.
  const R = T_a_b.R;
  const bx = T_b_c.t[0]!, by = T_b_c.t[1]!, bz = T_b_c.t[2]!;
  const tx = R[0]! * bx + R[1]! * by + R[2]! * bz + T_a_b.t[0]!;
  const ty = R[3]! * bx + R[4]! * by + R[5]! * bz + T_a_b.t[1]!;
  const tz = R[6]! * bx + R[7]! * by + R[8]! * bz + T_a_b.t[2]!;
  mat3Mul(out.R, T_a_b.R, T_b_c.R);
  out.t[0] = tx;
  out.t[1] = ty;
  out.t[2] = tz;
  return out;
}

/**
 * T_b_a = T_a_b⁻¹ = (Rᵀ, −Rᵀ t). out may alias the input.
 * J_Tba_Tab (6x6, left perturbations of both): −Ad(T_a_b⁻¹).
 */
export function inverse(T_a_b: Pose, out: Pose = poseIdentity(), J_Tba_Tab?: Float64Array): Pose {
  const R = T_a_b.R;
  const x = T_a_b.t[0]!, y = T_a_b.t[1]!, z = T_a_b.t[2]!;
  const tx = -(R[0]! * x + R[3]! * y + R[6]! * z);
  const ty = -(R[1]! * x + R[4]! * y + R[7]! * z);
  const tz = -(R[2]! * x + R[5]! * y + R[8]! * z);
  mat3Transpose(out.R, T_a_b.R);
  out.t[0] = tx;
  out.t[1] = ty;
  out.t[2] = tz;
  if (J_Tba_Tab) {
    adjoint(out, J_Tba_Tab);
    for (let i = 0; i < 36; i++) J_Tba_Tab[i] = -J_Tba_Tab[i]!;
  }
  return out;
}

/**
 * act(T_a_b, p_b) → p_a = R p_b + t.
 * J_pa_T (3x6, left perturbation of T_a_b): [−[p_a]×, I].
 * J_pa_pb (3x3): R.
 */
export function act(T_a_b: Pose, p_b: ArrayLike<number>, out: Vec3 = new Float64Array(3), J_pa_T?: Float64Array, J_pa_pb?: Float64Array): Vec3 {
  mat3MulVec(out, T_a_b.R, p_b);
  out[0]! += T_a_b.t[0]!;
  out[1]! += T_a_b.t[1]!;
  out[2]! += T_a_b.t[2]!;
  if (J_pa_T) {
    const x = out[0]!, y = out[1]!, z = out[2]!;
    // −[p]× = [[0, z, −y], [−z, 0, x], [y, −x, 0]]
    J_pa_T[0] = 0; J_pa_T[1] = z; J_pa_T[2] = -y; J_pa_T[3] = 1; J_pa_T[4] = 0; J_pa_T[5] = 0;
    J_pa_T[6] = -z; J_pa_T[7] = 0; J_pa_T[8] = x; J_pa_T[9] = 0; J_pa_T[10] = 1; J_pa_T[11] = 0;
    J_pa_T[12] = y; J_pa_T[13] = -x; J_pa_T[14] = 0; J_pa_T[15] = 0; J_pa_T[16] = 0; J_pa_T[17] = 1;
  }
  if (J_pa_pb) J_pa_pb.set(T_a_b.R);
  return out;
}

/**
 * exp(δ) for δ = [ω, ρ]: R = exp([ω]×), t = J_l(ω) ρ (J_l the SO(3) left Jacobian).
 */
export function se3Exp(delta: ArrayLike<number>, out: Pose = poseIdentity()): Pose {
  // so3Exp / so3LeftJacobian read only the first three entries (ω).
  so3Exp(delta, out.R);
  const V = so3LeftJacobian(delta, expScratchV);
  const rx = delta[3]!, ry = delta[4]!, rz = delta[5]!;
  out.t[0] = V[0]! * rx + V[1]! * ry + V[2]! * rz;
  out.t[1] = V[3]! * rx + V[4]! * ry + V[5]! * rz;
  out.t[2] = V[6]! * rx + V[7]! * ry + V[8]! * rz;
  return out;
}

const expScratchV = new Float64Array(9);

/** log(T) = [ω, J_l(ω)⁻¹ t], the inverse of se3Exp. */
export function se3Log(T: Pose, out: Float64Array = new Float64Array(6)): Float64Array {
  const w = so3Log(T.R);
  const Vinv = so3LeftJacobianInverse(w);
  const rho = mat3MulVec(new Float64Array(3), Vinv, T.t);
  out[0] = w[0]!;
  out[1] = w[1]!;
  out[2] = w[2]!;
  out[3] = rho[0]!;
  out[4] = rho[1]!;
  out[5] = rho[2]!;
  return out;
}

/**
 * Left update T ⊞ δ = exp(δ)·T with the exact group exponential, so that
 * boxMinus(boxPlus(T, δ), T) = δ for |ω| < π.
 */
export function boxPlus(T: Pose, delta: ArrayLike<number>, out: Pose = poseIdentity()): Pose {
  return compose(se3Exp(delta, plusScratch), T, out);
}

const plusScratch: Pose = { R: new Float64Array(9), t: new Float64Array(3) };

/** δ = log(T1 · T0⁻¹), so that boxPlus(T0, δ) = T1. */
export function boxMinus(T1: Pose, T0: Pose, out: Float64Array = new Float64Array(6)): Float64Array {
  return se3Log(compose(T1, inverse(T0)), out);
}

/**
 * Adjoint Ad(T) (6x6 row-major) for the [ω, ρ] ordering:
 *   Ad(T) = [[R, 0], [[t]× R, R]],  with exp(Ad(T) δ) = T exp(δ) T⁻¹.
 * Use: exp(δ)·T = T·exp(Ad(T⁻¹) δ).
 */
export function adjoint(T: Pose, out: Float64Array = new Float64Array(36)): Float64Array {
  const R = T.R;
  const tx = T.t[0]!, ty = T.t[1]!, tz = T.t[2]!;
  out.fill(0);
  for (let i = 0; i < 3; i++) {
    for (let j = 0; j < 3; j++) {
      const r = R[i * 3 + j]!;
      out[i * 6 + j] = r;
      out[(i + 3) * 6 + j + 3] = r;
    }
  }
  // [t]× R
  for (let j = 0; j < 3; j++) {
    const r0 = R[j]!, r1 = R[3 + j]!, r2 = R[6 + j]!;
    out[3 * 6 + j] = -tz * r1 + ty * r2;
    out[4 * 6 + j] = tz * r0 - tx * r2;
    out[5 * 6 + j] = -ty * r0 + tx * r1;
  }
  return out;
}

/**
 * out[off + 6i + j] = (Rᵀ X R)_ij for a 3x3 row-major R and X given entry by entry. With `symmetric`
 * (X symmetric) the lower triangle is copied from the upper one, so the block is exactly symmetric.
 */
function rotateInto(
  R: Float64Array,
  x00: number, x01: number, x02: number,
  x10: number, x11: number, x12: number,
  x20: number, x21: number, x22: number,
  out: Float64Array,
  off: number,
  symmetric: boolean,
): void {
  const r00 = R[0]!, r01 = R[1]!, r02 = R[2]!, r10 = R[3]!, r11 = R[4]!, r12 = R[5]!, r20 = R[6]!, r21 = R[7]!, r22 = R[8]!;
  // Y = X R
  const y00 = x00 * r00 + x01 * r10 + x02 * r20, y01 = x00 * r01 + x01 * r11 + x02 * r21, y02 = x00 * r02 + x01 * r12 + x02 * r22;
  const y10 = x10 * r00 + x11 * r10 + x12 * r20, y11 = x10 * r01 + x11 * r11 + x12 * r21, y12 = x10 * r02 + x11 * r12 + x12 * r22;
  const y20 = x20 * r00 + x21 * r10 + x22 * r20, y21 = x20 * r01 + x21 * r11 + x22 * r21, y22 = x20 * r02 + x21 * r12 + x22 * r22;
  // Rᵀ Y: entry (i, j) = Σ_k R_ki Y_kj
  out[off] = r00 * y00 + r10 * y10 + r20 * y20;
  out[off + 1] = r00 * y01 + r10 * y11 + r20 * y21;
  out[off + 2] = r00 * y02 + r10 * y12 + r20 * y22;
  out[off + 7] = r01 * y01 + r11 * y11 + r21 * y21;
  out[off + 8] = r01 * y02 + r11 * y12 + r21 * y22;
  out[off + 14] = r02 * y02 + r12 * y12 + r22 * y22;
  if (symmetric) {
    out[off + 6] = out[off + 1]!;
    out[off + 12] = out[off + 2]!;
    out[off + 13] = out[off + 8]!;
  } else {
    out[off + 6] = r01 * y00 + r11 * y10 + r21 * y20;
    out[off + 12] = r02 * y00 + r12 * y10 + r22 * y20;
    out[off + 13] = r02 * y01 + r12 * y11 + r22 * y21;
  }
}

/**
 * Congruence by the adjoint: outA = Ad(T)ᵀ A Ad(T) and outb = Ad(T)ᵀ b for
 * a symmetric 6x6 A (row-major) and a 6-vector b; outputs must not alias
 * the inputs. This re-expresses normal equations formed for a left
 * perturbation δ' = Ad(T) δ in terms of δ. Block form, with
 * Ad(T) = K · diag(R, R), K = [[I, 0], [C, I]], C = [t]× (Cᵀ = −C) and
 * A = [[P, Q], [Qᵀ, W]]:
 *   Kᵀ A K = [[P + QC + (QC)ᵀ − CWC, Q − CW], [(Q − CW)ᵀ, W]],  Kᵀ b = [b₁ − t × b₂, b₂],
 * then every 3x3 block X becomes Rᵀ X R and each 3-vector v becomes Rᵀ v.
 * Row i of M·C is mᵢ × t; column j of C·M is t × mⱼ. About 200
 * multiplications instead of the 430 of the dense products, all in locals.
 */
export function adjointCongruence(T: Pose, A: Float64Array, b: Float64Array, outA: Float64Array, outb: Float64Array): void {
  const R = T.R;
  const tx = T.t[0]!, ty = T.t[1]!, tz = T.t[2]!;
  const q00 = A[3]!, q01 = A[4]!, q02 = A[5]!, q10 = A[9]!, q11 = A[10]!, q12 = A[11]!, q20 = A[15]!, q21 = A[16]!, q22 = A[17]!;
  const w00 = A[21]!, w01 = A[22]!, w02 = A[23]!, w11 = A[28]!, w12 = A[29]!, w22 = A[35]!;
  // QC: row i is q_i × t.
  const qc00 = q01 * tz - q02 * ty, qc01 = q02 * tx - q00 * tz, qc02 = q00 * ty - q01 * tx;
  const qc10 = q11 * tz - q12 * ty, qc11 = q12 * tx - q10 * tz, qc12 = q10 * ty - q11 * tx;
  const qc20 = q21 * tz - q22 * ty, qc21 = q22 * tx - q20 * tz, qc22 = q20 * ty - q21 * tx;
  // CW: column j is t × w_j (W symmetric).
  const cw00 = ty * w02 - tz * w01, cw10 = tz * w00 - tx * w02, cw20 = tx * w01 - ty * w00;
  const cw01 = ty * w12 - tz * w11, cw11 = tz * w01 - tx * w12, cw21 = tx * w11 - ty * w01;
  const cw02 = ty * w22 - tz * w12, cw12 = tz * w02 - tx * w22, cw22 = tx * w12 - ty * w02;
  // (CW)C (symmetric): row i is (CW)_i × t; upper triangle.
  const cwc00 = cw01 * tz - cw02 * ty, cwc01 = cw02 * tx - cw00 * tz, cwc02 = cw00 * ty - cw01 * tx;
  const cwc11 = cw12 * tx - cw10 * tz, cwc12 = cw10 * ty - cw11 * tx;
  const cwc22 = cw20 * ty - cw21 * tx;
  const x00 = A[0]! + 2 * qc00 - cwc00, x01 = A[1]! + qc01 + qc10 - cwc01, x02 = A[2]! + qc02 + qc20 - cwc02;
  const x11 = A[7]! + 2 * qc11 - cwc11, x12 = A[8]! + qc12 + qc21 - cwc12, x22 = A[14]! + 2 * qc22 - cwc22;
  rotateInto(R, x00, x01, x02, x01, x11, x12, x02, x12, x22, outA, 0, true);
  rotateInto(R, q00 - cw00, q01 - cw01, q02 - cw02, q10 - cw10, q11 - cw11, q12 - cw12, q20 - cw20, q21 - cw21, q22 - cw22, outA, 3, false);
  rotateInto(R, w00, w01, w02, w01, w11, w12, w02, w12, w22, outA, 21, true);
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) outA[6 * (3 + j) + i] = outA[6 * i + 3 + j]!;
  const b0 = b[3]!, b1 = b[4]!, b2 = b[5]!;
  const v0 = b[0]! - (ty * b2 - tz * b1);
  const v1 = b[1]! - (tz * b0 - tx * b2);
  const v2 = b[2]! - (tx * b1 - ty * b0);
  for (let i = 0; i < 3; i++) {
    outb[i] = R[i]! * v0 + R[3 + i]! * v1 + R[6 + i]! * v2;
    outb[3 + i] = R[i]! * b0 + R[3 + i]! * b1 + R[6 + i]! * b2;
  }
}

const manifoldScratch: Pose = { R: new Float64Array(9), t: new Float64Array(3) };

/**
 * A pose stored as 12 numbers [R row-major (9), t (3)] with the left update
 * x ⊞ δ = exp(δ)·x. Structurally matches the solver's Manifold interface.
 */
export const se3LeftManifold = {
  ambientSize: 12,
  tangentSize: 6,
  plus(x: Float64Array, delta: Float64Array, out: Float64Array): void {
    // exp(δ)·x written straight into out (which may alias x), no allocation.
    const E = se3Exp(delta, plusScratch);
    const X = manifoldScratch;
    const R = X.R;
    const t = X.t;
    // Element copies: subarray() would allocate two views per call (the LM loop calls this per block).
    for (let k = 0; k < 9; k++) R[k] = x[k]!;
    t[0] = x[9]!;
    t[1] = x[10]!;
    t[2] = x[11]!;
    compose(E, X, X);
    for (let k = 0; k < 9; k++) out[k] = R[k]!;
    out[9] = t[0]!;
    out[10] = t[1]!;
    out[11] = t[2]!;
  },
} as const;

/** [R row-major, t] (12 numbers) → Pose (copies). */
export function poseFromArray12(x: ArrayLike<number>): Pose {
  if (x.length !== 12) throw new RangeError(`poseFromArray12: expected 12 numbers, got ${x.length}`);
  const a = Float64Array.from(x);
  return { R: a.slice(0, 9), t: a.slice(9, 12) };
}

/** Pose → [R row-major, t] (12 numbers). */
export function poseToArray12(T: Pose, out: Float64Array = new Float64Array(12)): Float64Array {
  out.set(T.R, 0);
  out.set(T.t, 9);
  return out;
}
