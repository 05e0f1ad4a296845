/**
 * Fixtures shared by the checkerboard detection tests.
 */
import type { RenderCamera } from '../synth/render-board.js';

/** A 640x480 camera with strong barrel distortion (Brown–Conrady), for rendered test photos. */
export const DETECT_TEST_CAMERA: Readonly<RenderCamera> = Object.freeze({
  width: 640,
  height: 480,
  fx: 520,
  fy: 520,
  cx: 319.5,
  cy: 239.5,
  distortion: Object.freeze([-0.25, 0.07, 0.001, -0.001, 0]) as number[],
});
