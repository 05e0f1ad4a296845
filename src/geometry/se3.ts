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

const congruence = {
  P: new Float64Array(9),
  Q: new Float64Array(9),
  W: new Float64Array(9),
  QC: new Float64Array(9),
  CW: new Float64Array(9),
  X: new Float64Array(9),
  Y: new Float64Array(9),
};

/**
 * out[off + 6i + j] = (Rᵀ X R)_ij for 3x3 row-major R, X (Y: scratch). With
 * `symmetric` (X symmetric) only the upper triangle is computed and mirrored,
 * so the block is exactly symmetric.
 */
function rotateBlockInto(R: Float64Array, X: Float64Array, Y: Float64Array, out: Float64Array, off: number, symmetric: boolean): void {
  for (let i = 0; i < 3; i++) {
    const x0 = X[3 * i]!, x1 = X[3 * i + 1]!, x2 = X[3 * i + 2]!;
    for (let j = 0; j < 3; j++) Y[3 * i + j] = x0 * R[j]! + x1 * R[3 + j]! + x2 * R[6 + j]!;
  }
  for (let i = 0; i < 3; i++) {
    const r0 = R[i]!, r1 = R[3 + i]!, r2 = R[6 + i]!;
    for (let j = symmetric ? i : 0; j < 3; j++) out[off + 6 * i + j] = r0 * Y[j]! + r1 * Y[3 + j]! + r2 * Y[6 + j]!;
  }
  if (symmetric) for (let i = 1; i < 3; i++) for (let j = 0; j < i; j++) out[off + 6 * i + j] = out[off + 6 * j + i]!;
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
 * multiplications instead of the 430 of the dense products.
 */
export function adjointCongruence(T: Pose, A: Float64Array, b: Float64Array, outA: Float64Array, outb: Float64Array): void {
  const R = T.R;
  const tx = T.t[0]!, ty = T.t[1]!, tz = T.t[2]!;
  const { P, Q, W, QC, CW, X, Y } = congruence;
  for (let i = 0; i < 3; i++) {
    for (let j = 0; j < 3; j++) {
      P[3 * i + j] = A[6 * i + j]!;
      Q[3 * i + j] = A[6 * i + 3 + j]!;
      W[3 * i + j] = A[6 * (3 + i) + 3 + j]!;
    }
  }
  for (let i = 0; i < 3; i++) {
    const q0 = Q[3 * i]!, q1 = Q[3 * i + 1]!, q2 = Q[3 * i + 2]!;
    QC[3 * i] = q1 * tz - q2 * ty;
    QC[3 * i + 1] = q2 * tx - q0 * tz;
    QC[3 * i + 2] = q0 * ty - q1 * tx;
    const w0 = W[i]!, w1 = W[3 + i]!, w2 = W[6 + i]!;
    CW[i] = ty * w2 - tz * w1;
    CW[3 + i] = tz * w0 - tx * w2;
    CW[6 + i] = tx * w1 - ty * w0;
  }
  // X = Q − CW (upper-right block before rotation).
  for (let k = 0; k < 9; k++) X[k] = Q[k]! - CW[k]!;
  rotateBlockInto(R, X, Y, outA, 3, false);
  // X = P + QC + (QC)ᵀ − (CW)C, rows of (CW)C being (CW)ᵢ × t.
  for (let i = 0; i < 3; i++) {
    const c0 = CW[3 * i]!, c1 = CW[3 * i + 1]!, c2 = CW[3 * i + 2]!;
    const cwc0 = c1 * tz - c2 * ty, cwc1 = c2 * tx - c0 * tz, cwc2 = c0 * ty - c1 * tx;
    X[3 * i] = P[3 * i]! + QC[3 * i]! + QC[i]! - cwc0;
    X[3 * i + 1] = P[3 * i + 1]! + QC[3 * i + 1]! + QC[3 + i]! - cwc1;
    X[3 * i + 2] = P[3 * i + 2]! + QC[3 * i + 2]! + QC[6 + i]! - cwc2;
  }
  rotateBlockInto(R, X, Y, outA, 0, true);
  rotateBlockInto(R, W, Y, outA, 21, true);
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
