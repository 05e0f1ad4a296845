/**
 * Design priors: a camera's extrinsic is pulled toward its designed pose
 * (e.g. from a CAD drawing) with the design's stated sigmas, as a Gaussian
 * prior residual in the joint solve.
 *
 * Residual (6, whitened) for the camera block T = T_ref_cam against the
 * design D = T_ref_cam_design:
 *   r = [ log(R Dᵣᵀ) / σ_rot ,  (t − D_t) / σ_pos ]
 * Jacobian with respect to the left perturbation T ← exp(δ)·T (δ = [δr, δt]):
 *   ∂log(R Dᵣᵀ)/∂δr = J_l⁻¹(log(R Dᵣᵀ)),   ∂t/∂δ = [−[t]×, I]
 * (first order: t ← exp(δr) t + J_l(δr) δt).
 */
import type { ResidualBlock } from '../solver/problem.js';
import { so3LeftJacobianInverse, so3Log } from '../geometry/so3.js';
import { mat3Mul, mat3Transpose } from '../linalg/small.js';
import type { Pose } from '../geometry/se3.js';

export class PriorResidual implements ResidualBlock {
  readonly numResiduals = 6;
  readonly parameterBlocks: readonly number[];
  readonly innerSize = 6;
  readonly mapped = false;
  private readonly RdT: Float64Array;
  private readonly Rrel = new Float64Array(9);
  private readonly w = new Float64Array(3);
  private readonly Jinv = new Float64Array(9);

  constructor(
    cameraBlock: number,
    readonly design: Pose,
    readonly sigmaRotationRad: number,
    readonly sigmaPositionM: number,
  ) {
    this.parameterBlocks = [cameraBlock];
    this.RdT = mat3Transpose(new Float64Array(9), design.R);
  }

  evaluate(params: readonly Float64Array[], residuals: Float64Array, jacobian: Float64Array | null): boolean {
    const x = params[0]!;
    mat3Mul(this.Rrel, x.subarray(0, 9), this.RdT);
    so3Log(this.Rrel, this.w);
    const sr = 1 / this.sigmaRotationRad;
    const sp = 1 / this.sigmaPositionM;
    for (let i = 0; i < 3; i++) {
      residuals[i] = this.w[i]! * sr;
      residuals[3 + i] = (x[9 + i]! - this.design.t[i]!) * sp;
    }
    if (jacobian) {
      jacobian.fill(0);
      so3LeftJacobianInverse(this.w, this.Jinv);
      for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) jacobian[i * 6 + j] = this.Jinv[i * 3 + j]! * sr;
      const tx = x[9]!, ty = x[10]!, tz = x[11]!;
      // −[t]× = [[0, tz, −ty], [−tz, 0, tx], [ty, −tx, 0]]
      const m = [0, tz, -ty, -tz, 0, tx, ty, -tx, 0];
      for (let i = 0; i < 3; i++) {
        for (let j = 0; j < 3; j++) jacobian[(3 + i) * 6 + j] = m[i * 3 + j]! * sp;
        jacobian[(3 + i) * 6 + 3 + i] = sp;
      }
    }
    return true;
  }

  /** Whitened distance of the current pose from the design (sqrt of the squared norm of r): "how many sigmas the data moved it". */
  sigmasFromDesign(x: Float64Array): number {
    const r = new Float64Array(6);
    this.evaluate([x], r, null);
    return Math.hypot(...r);
  }
}
