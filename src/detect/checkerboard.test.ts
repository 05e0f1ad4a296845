/**
 * Detection rate and accuracy on synthetic photos rendered by the tests
 * themselves (src/testing/render-board.ts: 12x12 supersampled anti-aliasing,
 * Brown–Conrady distortion, perspective, blur, noise; exact ground truth by
 * forward projection).
 *
 * Set: 100 images of 640x480 (size chosen to bound the test time), a 9 x 6
 * inner-corner board (columns + rows odd, so the ids are unambiguous) in
 * random poses: in-plane rotation anywhere in ±180°, tilt up to ±40° about
 * each board axis, checkered area fully inside the image, every square side
 * ≥ 20 px. Mild blur (sigma 0.7 px) and noise (sigma 2/255 of full scale),
 * 8-bit quantisation.
 */
import { beforeAll, describe, expect, test } from 'vitest';
import { renderBoard, type RenderCamera } from '../synth/render-board.js';
import { sampleVisibleBoard } from '../synth/board-poses.js';
import { DETECT_TEST_CAMERA } from '../testing/detect-fixtures.js';
import { rng } from '../testing/numeric.js';
import { detectCheckerboard } from './checkerboard.js';

const camera: RenderCamera = DETECT_TEST_CAMERA;

describe('detectCheckerboard on 100 random synthetic views', () => {
  const board = { columns: 9, rows: 6, squareM: 0.03 };
  const u = rng(20261201);
  let found = 0;
  let wrongIds = 0;
  let flagged = 0;
  let sumSq = 0;
  let count = 0;
  let worst = 0;
  const misses: string[] = [];
  beforeAll(() => {
    for (let n = 0; n < 100; n++) {
      const T = sampleVisibleBoard(u, camera, board, { maxTiltRad: (40 * Math.PI) / 180, minSquarePx: 20 });
      const r = renderBoard(camera, board, T, { blurSigmaPx: 0.7, noiseSigma: 2 / 255, seed: 1000 + n });
      const d = detectCheckerboard(r.image, board);
      if (!d.found) {
        misses.push(`#${n}: ${d.reason} (${d.message})`);
        continue;
      }
      found++;
      if (d.ambiguous180) flagged++;
      let maxErr = 0;
      let sq = 0;
      for (let i = 0; i < board.columns * board.rows; i++) {
        const e2 = (d.corners[2 * i]! - r.cornersPx[2 * i]!) ** 2 + (d.corners[2 * i + 1]! - r.cornersPx[2 * i + 1]!) ** 2;
        sq += e2;
        maxErr = Math.max(maxErr, Math.sqrt(e2));
      }
      // A corner more than half a square away means a wrong id, not an inaccurate one.
      if (maxErr > 0.5 * d.spacingPx) {
        wrongIds++;
        continue;
      }
      worst = Math.max(worst, maxErr);
      sumSq += sq;
      count += board.columns * board.rows;
    }
    console.info(`checkerboard: found ${found}/100, corner RMS ${Math.sqrt(sumSq / count).toFixed(4)} px, worst ${worst.toFixed(3)} px`);
  });

  test('finds at least 99 % of the fully visible boards', () => {
    expect(found, misses.join('; ')).toBeGreaterThanOrEqual(99);
  });

  test('every found board has the ids of the ground truth and is not flagged ambiguous', () => {
    expect(wrongIds).toBe(0);
    expect(flagged).toBe(0);
  });

  test('corner RMS error is below 0.05 px and no corner is off by more than 0.2 px', () => {
    const rms = Math.sqrt(sumSq / count);
    expect(rms).toBeLessThan(0.05);
    expect(worst).toBeLessThan(0.2);
  });
});
