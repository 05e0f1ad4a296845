/**
 * Camera model interface. Every model maps a point in the camera's optical
 * frame (+z forward, +x right, +y down; metres) to a pixel (u right, v down,
 * origin at the centre of the top-left pixel), following formats.md.
 *
 * Parameter vector layout (Float64Array), exactly the order of formats.md:
 *   pinhole:        fx fy cx cy
 *   brown-conrady:  fx fy cx cy k1 k2 p1 p2 k3
 *   kannala-brandt: fx fy cx cy k1 k2 k3 k4
 */

export type CameraModelName = 'pinhole' | 'brown-conrady' | 'kannala-brandt';

export const CAMERA_MODEL_NAMES: readonly CameraModelName[] = ['pinhole', 'brown-conrady', 'kannala-brandt'];

export interface CameraModel {
  readonly name: CameraModelName;
  /** Parameter names in storage order, e.g. ['fx','fy','cx','cy','k1',...]. */
  readonly paramNames: readonly string[];
  /** Number of intrinsic parameters (= paramNames.length). */
  readonly numParams: number;
  /** Number of distortion coefficients (numParams − 4). */
  readonly numDistortion: number;

  /**
   * Projects p_cam (3) to a pixel uv (2). Returns false, and leaves the
   * outputs unspecified, when the point is invalid for the model (behind the
   * camera for perspective models; beyond the model's valid angle for
   * fisheye; numerically unusable).
   * J_uv_p: 2x3 row-major, ∂uv/∂p_cam. J_uv_intr: 2 x numParams row-major,
   * ∂uv/∂params. Both optional; no Jacobian work is done when omitted.
   */
  project(
    params: ArrayLike<number>,
    p_cam: ArrayLike<number>,
    uv: Float64Array,
    J_uv_p?: Float64Array,
    J_uv_intr?: Float64Array,
  ): boolean;

  /**
   * Inverse of project: a pixel to a unit-norm bearing vector in the camera
   * frame (z may be ≤ 0 for fisheye beyond 90°). Returns false when the
   * model is not invertible there (iteration did not converge, or the pixel
   * lies outside the model's valid region).
   */
  unproject(params: ArrayLike<number>, uv: ArrayLike<number>, ray: Float64Array): boolean;

  /**
   * Pixel to the normalised image plane: out2 = (x/z, y/z) of the bearing
   * that `unproject` returns, for perspective uses (PnP, homographies).
   * Returns false when unproject fails or the bearing has z ≤ 0.
   */
  unprojectToPlane(params: ArrayLike<number>, uv: ArrayLike<number>, out2: Float64Array): boolean;
}
