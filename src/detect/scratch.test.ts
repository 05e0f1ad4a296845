import { test } from 'vitest';
import { renderBoard, type RenderCamera } from '../testing/render-board.js';
import { sampleVisibleBoard } from '../testing/board-poses.js';
import { detectCheckerboard } from './checkerboard.js';
import { rng } from '../testing/numeric.js';
function run(name: string, cam: RenderCamera, board: { columns: number; rows: number; squareM: number }, ps: any, ro: any, N = 12) {
  const u = rng(1);
  let found = 0, sq = 0, cnt = 0, bad = 0; const reasons: string[] = [];
  for (let n = 0; n < N; n++) {
    const T = sampleVisibleBoard(u, cam, board, ps);
    const r = renderBoard(cam, board, T, { ...ro, seed: n });
    const d = detectCheckerboard(r.image, board);
    if (!d.found) { reasons.push(d.reason + ':' + d.message + ' sq=' + r.minSquarePx.toFixed(0)); continue; }
    found++;
    let m = 0;
    for (let i = 0; i < d.corners.length / 2; i++) { const e2 = (d.corners[2*i]! - r.cornersPx[2*i]!) ** 2 + (d.corners[2*i+1]! - r.cornersPx[2*i+1]!) ** 2; m = Math.max(m, e2); sq += e2; cnt++; }
    if (m > 1) bad++;
  }
  console.log(name, found, '/', N, 'bad', bad, 'rms', Math.sqrt(sq / cnt).toFixed(4), reasons.slice(0, 4));
}
test('scratch', () => {
  const big: RenderCamera = { width: 1280, height: 800, fx: 900, fy: 900, cx: 639.5, cy: 399.5, distortion: [-0.28, 0.07, 0, 0, 0] };
  run('big squares blur2', big, { columns: 7, rows: 4, squareM: 0.1 }, { maxTiltRad: 0.5, minSquarePx: 60 }, { blurSigmaPx: 2, noiseSigma: 3 / 255 });
  run('big squares blur3.5', big, { columns: 7, rows: 4, squareM: 0.1 }, { maxTiltRad: 0.5, minSquarePx: 60 }, { blurSigmaPx: 3.5, noiseSigma: 3 / 255 });
  run('oblique 65deg', big, { columns: 10, rows: 7, squareM: 0.06 }, { maxTiltRad: 1.15, minSquarePx: 16 }, { blurSigmaPx: 0.8, noiseSigma: 2 / 255 });
  run('small squares 14', big, { columns: 10, rows: 7, squareM: 0.06 }, { maxTiltRad: 0.5, minSquarePx: 14 }, { blurSigmaPx: 0.8, noiseSigma: 2 / 255 });
  run('low contrast', big, { columns: 10, rows: 7, squareM: 0.06 }, { maxTiltRad: 0.5 }, { blurSigmaPx: 0.8, noiseSigma: 2 / 255, black: 0.35, white: 0.55 });
});
