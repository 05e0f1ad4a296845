/**
 * Gauss–Newton normal equations of reprojection residuals with respect to a
 * camera pose, accumulated point by point without storing the Jacobian. Shared
 * by single-view refinement (refine.ts) and the rig solver's view residual.
 *
 * For p_cam = R p + t and r_i = w_i (project(p_cam) − uv_i), each Jacobian row
 * with respect to the left perturbation of T_cam_target (CONVENTIONS.md) is
 *   j = w · J_uv_p[row] · [−[p_cam]×, I] = [a × p_cam, a],  a = w · J_uv_p[row].
 * With a loss ρ on s_i = ‖r_i‖² (IRLS weighting, as the solver engine):
 *   A = Σ ρ′(s_i) jᵀj,  b = Σ ρ′(s_i) jᵀr,  cost = Σ ρ(s_i)   (ρ(s) = s without a loss).
 * A is 6x6 row-major (both triangles written), b has 6 entries.
 */
import type { CameraModel } from '../camera/model.js';
import type { Pose } from '../geometry/se3.js';

/** A robust loss, structurally the solver's LossFunction: rho[0] = ρ(s), rho[1] = ρ′(s). */
export interface PointLoss {
  evaluate(s: number, rho: Float64Array): void;
}

const scratchP = new Float64Array(3);
const scratchUv = new Float64Array(2);
const scratchJ = new Float64Array(6);
const scratchRho = new Float64Array(3);

/**
 * Fills A and b (see the file comment) and, when `residuals` is given, the
 * weighted residuals (2 per point). invSigma: per-point weight w_i (null: 1).
 * Returns the cost Σ ρ(s_i), or −(i + 1) for the first point i that the model
 * cannot project (A and b are then unspecified).
 */
export function reprojectionNormalEquations(
  model: CameraModel,
  intrinsics: ArrayLike<number>,
  T_cam_target: Pose,
  points: ArrayLike<number>,
  pixels: ArrayLike<number>,
  invSigma: ArrayLike<number> | null,
  loss: PointLoss | undefined,
  A: Float64Array,
  b: Float64Array,
  residuals: Float64Array | null,
): number {
  const R = T_cam_target.R;
  const R0 = R[0]!, R1 = R[1]!, R2 = R[2]!, R3 = R[3]!, R4 = R[4]!, R5 = R[5]!, R6 = R[6]!, R7 = R[7]!, R8 = R[8]!;
  const t0 = T_cam_target.t[0]!, t1 = T_cam_target.t[1]!, t2 = T_cam_target.t[2]!;
  const n = points.length / 3;
  const pc = scratchP;
  const uv = scratchUv;
  const Jp = scratchJ;
  const rho = scratchRho;
  let a00 = 0, a01 = 0, a02 = 0, a03 = 0, a04 = 0, a05 = 0;
  let a11 = 0, a12 = 0, a13 = 0, a14 = 0, a15 = 0;
  let a22 = 0, a23 = 0, a24 = 0, a25 = 0;
  let a33 = 0, a34 = 0, a35 = 0;
  let a44 = 0, a45 = 0;
  let a55 = 0;
  let b0 = 0, b1 = 0, b2 = 0, b3 = 0, b4 = 0, b5 = 0;
  let cost = 0;
  for (let i = 0; i < n; i++) {
    const Px = points[3 * i]!, Py = points[3 * i + 1]!, Pz = points[3 * i + 2]!;
    const x = R0 * Px + R1 * Py + R2 * Pz + t0;
    const y = R3 * Px + R4 * Py + R5 * Pz + t1;
    const z = R6 * Px + R7 * Py + R8 * Pz + t2;
    pc[0] = x;
    pc[1] = y;
    pc[2] = z;
    if (!model.project(intrinsics, pc, uv, Jp)) return -(i + 1);
    const w = invSigma === null ? 1 : invSigma[i]!;
    const ru = (uv[0]! - pixels[2 * i]!) * w;
    const rv = (uv[1]! - pixels[2 * i + 1]!) * w;
    if (residuals !== null) {
      residuals[2 * i] = ru;
      residuals[2 * i + 1] = rv;
    }
    const s = ru * ru + rv * rv;
    let rhoS = s;
    let q = 1;
    if (loss) {
      loss.evaluate(s, rho);
      rhoS = rho[0]!;
      q = rho[1]! > 0 ? rho[1]! : 0;
    }
    cost += rhoS;
    if (q === 0) continue;
    // With c, d = √ρ′·w·J_uv_p rows u, v and e_u, e_v = √ρ′·r_u, r_v (√ρ′ computed only when
    // ρ′ ≠ 1), the rows are j = [p × c, c], [p × d, d] = [P c, c], [P d, d] with P = [p]×. So
    // per point G = c cᵀ + d dᵀ and h = c e_u + d e_v, then
    //   A += [[P G Pᵀ, P G], [G Pᵀ, G]],  b += [P h, h]
    // (about 54 products instead of 66 for the two rows one by one).
    let sq = 1;
    if (q !== 1) sq = Math.sqrt(q);
    const sw = w * sq;
    const c0 = Jp[0]! * sw, c1 = Jp[1]! * sw, c2 = Jp[2]! * sw;
    const d0 = Jp[3]! * sw, d1 = Jp[4]! * sw, d2 = Jp[5]! * sw;
    const eu = ru * sq, ev = rv * sq;
    const g00 = c0 * c0 + d0 * d0, g01 = c0 * c1 + d0 * d1, g02 = c0 * c2 + d0 * d2;
    const g11 = c1 * c1 + d1 * d1, g12 = c1 * c2 + d1 * d2, g22 = c2 * c2 + d2 * d2;
    const h0 = c0 * eu + d0 * ev, h1 = c1 * eu + d1 * ev, h2 = c2 * eu + d2 * ev;
    // M = P G (rows of P: (0, −z, y), (z, 0, −x), (−y, x, 0)).
    const m00 = y * g02 - z * g01, m01 = y * g12 - z * g11, m02 = y * g22 - z * g12;
    const m10 = z * g00 - x * g02, m11 = z * g01 - x * g12, m12 = z * g02 - x * g22;
    const m20 = x * g01 - y * g00, m21 = x * g11 - y * g01, m22 = x * g12 - y * g02;
    // P G Pᵀ = M Pᵀ, upper triangle.
    a00 += y * m02 - z * m01; a01 += z * m00 - x * m02; a02 += x * m01 - y * m00;
    a11 += z * m10 - x * m12; a12 += x * m11 - y * m10;
    a22 += x * m21 - y * m20;
    a03 += m00; a04 += m01; a05 += m02;
    a13 += m10; a14 += m11; a15 += m12;
    a23 += m20; a24 += m21; a25 += m22;
    a33 += g00; a34 += g01; a35 += g02;
    a44 += g11; a45 += g12;
    a55 += g22;
    b0 += y * h2 - z * h1; b1 += z * h0 - x * h2; b2 += x * h1 - y * h0;
    b3 += h0; b4 += h1; b5 += h2;
  }
  A[0] = a00; A[1] = a01; A[2] = a02; A[3] = a03; A[4] = a04; A[5] = a05;
  A[6] = a01; A[7] = a11; A[8] = a12; A[9] = a13; A[10] = a14; A[11] = a15;
  A[12] = a02; A[13] = a12; A[14] = a22; A[15] = a23; A[16] = a24; A[17] = a25;
  A[18] = a03; A[19] = a13; A[20] = a23; A[21] = a33; A[22] = a34; A[23] = a35;
  A[24] = a04; A[25] = a14; A[26] = a24; A[27] = a34; A[28] = a44; A[29] = a45;
  A[30] = a05; A[31] = a15; A[32] = a25; A[33] = a35; A[34] = a45; A[35] = a55;
  b[0] = b0; b[1] = b1; b[2] = b2; b[3] = b3; b[4] = b4; b[5] = b5;
  return cost;
}
