/**
 * Invented camera parameter sets for tests (synthetic ground truth, not
 * measured lenses). Each says whether its whole image lies inside the
 * model's valid region, so round-trip laws can sweep the full image.
 */
import { brownConrady } from '../camera/brown-conrady.js';
import { kannalaBrandt } from '../camera/kannala-brandt.js';
import type { CameraModel } from '../camera/model.js';
import { pinhole } from '../camera/pinhole.js';

export interface CameraFixture {
  label: string;
  model: CameraModel;
  params: Float64Array;
  width: number;
  height: number;
  /** Every pixel centre in [0, width−1] x [0, height−1] unprojects. */
  imageFullyValid: boolean;
}

function fixture(label: string, model: CameraModel, params: number[], width: number, height: number, imageFullyValid: boolean): CameraFixture {
  return { label, model, params: Float64Array.from(params), width, height, imageFullyValid };
}

export const CAMERA_FIXTURES: readonly CameraFixture[] = [
  fixture('pinhole 1280x800', pinhole, [600, 610, 639.5, 399.5], 1280, 800, true),
  // Barrel without a turning point: 1 − 0.84 s + 0.35 s² has no real root.
  fixture('brown-conrady barrel, no turning point', brownConrady, [900, 905, 639.5, 399.5, -0.28, 0.07, 0.0012, -0.0008, 0], 1280, 800, true),
  // Barrel with k3 < 0: turning point at r² ≈ 2.48; the image corners (r_d ≈ 0.84) stay inside r_d,max ≈ 0.92.
  fixture('brown-conrady barrel, turning point outside image', brownConrady, [900, 905, 631.2, 404.8, -0.28, 0.07, 0.0012, -0.0008, -0.01], 1280, 800, true),
  // Pincushion: turning point at r² = 5.
  fixture('brown-conrady pincushion', brownConrady, [600, 598, 641.0, 398.0, 0.1, -0.02, 0.0005, 0.0007, 0], 1280, 800, true),
  // Strong barrel whose fold lies inside the image: the corners are outside the valid region.
  fixture('brown-conrady strong barrel, fold inside image', brownConrady, [700, 700, 639.5, 399.5, -0.35, 0.12, 0.001, -0.0005, -0.018], 1280, 800, false),
  // Wide fisheye: θ_max = π; the image corners see about 145° off axis.
  fixture('kannala-brandt wide, beyond 90°', kannalaBrandt, [300, 302, 639.5, 399.5, 0.02, -0.003, 0.0005, -3e-5], 1280, 800, true),
  fixture('kannala-brandt mild', kannalaBrandt, [380, 381, 640.5, 511.5, -0.02, 0.004, -0.0006, 3e-5], 1280, 1024, true),
  // k1 = −0.1 alone: dθ_d/dθ = 1 − 0.3 θ² turns at θ = √(10/3) ≈ 104.6°, well inside the image.
  fixture('kannala-brandt turning at 104.6°', kannalaBrandt, [300, 300, 639.5, 399.5, -0.1, 0, 0, 0], 1280, 800, false),
];
