import { test } from 'vitest';
import { renderBoard, type RenderCamera, type RenderOptions } from '../testing/render-board.js';
import { sampleVisibleBoard } from '../testing/board-poses.js';
import { detectCheckerboard } from './checkerboard.js';
import { rng } from '../testing/numeric.js';

const cam: RenderCamera = { width: 640, height: 480, fx: 520, fy: 520, cx: 319.5, cy: 239.5, distortion: [-0.25, 0.07, 0.001, -0.001, 0] };
function run(name: string, C: number, Rn: number, ropts: RenderOptions, N = 40, seed = 7) {
  const s = 0.03;
  const u = rng(seed);
  let found = 0, sq = 0, cnt = 0, wrongIds = 0, amb = 0, maxe = 0;
  let tr = 0, td = 0;
  for (let n = 0; n < N; n++) {
    const T = sampleVisibleBoard(u, cam, { columns: C, rows: Rn, squareM: s });
    const t0 = performance.now();
    const r = renderBoard(cam, { columns: C, rows: Rn, squareM: s }, T, { ...ropts, seed: n + 1 });
    tr += performance.now() - t0;
    const t1 = performance.now();
    const d = detectCheckerboard(r.image, { columns: C, rows: Rn });
    td += performance.now() - t1;
    if (!d.found) { console.log(name, 'miss', n, d.reason, d.message, r.minSquarePx.toFixed(1)); continue; }
    found++;
    if (d.ambiguous180) amb++;
    let e2 = 0;
    for (let i = 0; i < C * Rn; i++) e2 += (d.corners[2 * i]! - r.cornersPx[2 * i]!) ** 2 + (d.corners[2 * i + 1]! - r.cornersPx[2 * i + 1]!) ** 2;
    if (e2 / (C * Rn) > 1) { wrongIds++; continue; }
    for (let i = 0; i < C * Rn; i++) { const e = Math.hypot(d.corners[2 * i]! - r.cornersPx[2 * i]!, d.corners[2 * i + 1]! - r.cornersPx[2 * i + 1]!); if (e > 0.07) console.log('big', n, i, e.toFixed(3), r.cornersPx[2*i]!.toFixed(2), r.cornersPx[2*i+1]!.toFixed(2), d.spacingPx.toFixed(1)); maxe = Math.max(maxe, e); }
    sq += e2; cnt += C * Rn;
  }
  console.log(name, { N, found, wrongIds, amb, rms: Math.sqrt(sq / cnt).toFixed(4), max: maxe.toFixed(3), renderMs: (tr / N).toFixed(1), detectMs: (td / N).toFixed(1) });
}
test('scratch', () => {
  run('mild', 9, 6, { blurSigmaPx: 0.7, noiseSigma: 2 / 255 });
  const d = cam.distortion; (cam as any).distortion = undefined;
  run('nodist noquant ss12', 9, 6, { blurSigmaPx: 0.7, quantize: false, supersample: 12 });
  run('nodist noquant ss24', 9, 6, { blurSigmaPx: 0.7, quantize: false, supersample: 24 });
  (cam as any).distortion = d;
  run('dist noquant ss12', 9, 6, { blurSigmaPx: 0.7, quantize: false, supersample: 12 });
  run('dist noquant ss24', 9, 6, { blurSigmaPx: 0.7, quantize: false, supersample: 24 });
  run('hard', 9, 6, { blurSigmaPx: 1.5, noiseSigma: 5 / 255, gamma: 2.2, lighting: { a: 0.8, b: -0.5, c: -0.6 } });
});
