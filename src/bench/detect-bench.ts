/**
 * Detection speed on one core: renders a few 1280x800 synthetic photos and
 * prints milliseconds per image for detection on a grey image in memory
 * (decoding is timed separately). Target: ≤ 200 ms per image. Prints
 * figures only, asserts nothing.
 *
 * Run after `npm run build`: `node dist/bench/detect-bench.js [images]`, or
 * call `runDetectBench(count)` from another bench script.
 */
import { pathToFileURL } from 'node:url';
import { renderBoard, type RenderCamera, type RenderResult } from '../synth/render-board.js';
import { sampleVisibleBoard } from '../synth/board-poses.js';
import { rng } from '../util/random.js';
import { detectCheckerboard } from '../detect/checkerboard.js';
import { decodeImage, encodePng } from '../detect/image.js';

export interface DetectBenchFigures {
  images: number;
  meanMs: number;
  medianMs: number;
  maxMs: number;
  pngDecodeMs: number;
  found: number;
  cornerRmsPx: number;
  lines: string[];
}

export function runDetectBench(count = 8): DetectBenchFigures {
  const camera: RenderCamera = { width: 1280, height: 800, fx: 900, fy: 900, cx: 639.5, cy: 399.5, distortion: [-0.28, 0.07, 0, 0, 0] };
  const board = { columns: 10, rows: 7, squareM: 0.06 };
  const u = rng(42);
  const images: RenderResult[] = [];
  for (let n = 0; n < count; n++) {
    const T = sampleVisibleBoard(u, camera, board, { maxTiltRad: 0.6, minSquarePx: 20 });
    images.push(renderBoard(camera, board, T, { blurSigmaPx: 0.8, noiseSigma: 2 / 255, seed: n }));
  }
  // Warm-up (JIT) on the first image, not timed.
  detectCheckerboard(images[0]!.image, board);
  let found = 0;
  let sumSq = 0;
  const times: number[] = [];
  for (const r of images) {
    const t0 = performance.now();
    const d = detectCheckerboard(r.image, board);
    times.push(performance.now() - t0);
    if (d.found) {
      found++;
      for (let i = 0; i < d.corners.length; i++) sumSq += (d.corners[i]! - r.cornersPx[i]!) ** 2;
    }
  }
  const png = encodePng(images[0]!.image);
  const t1 = performance.now();
  for (let k = 0; k < 3; k++) decodeImage(png);
  const pngDecodeMs = (performance.now() - t1) / 3;
  const sorted = times.slice().sort((a, b) => a - b);
  const meanMs = times.reduce((a, b) => a + b, 0) / times.length;
  const medianMs = sorted[Math.floor(sorted.length / 2)]!;
  const maxMs = sorted[sorted.length - 1]!;
  const cornerRmsPx = Math.sqrt(sumSq / Math.max(1, found * board.columns * board.rows));
  const lines = [
    `detect-bench: ${count} images of ${camera.width}x${camera.height}, board ${board.columns}x${board.rows}, one core`,
    `  detection: mean ${meanMs.toFixed(1)} ms/image, median ${medianMs.toFixed(1)} ms, max ${maxMs.toFixed(1)} ms (target ≤ 200 ms)`,
    `  per image: ${times.map((t) => t.toFixed(0)).join(' ')} ms`,
    `  PNG decode: ${pngDecodeMs.toFixed(1)} ms/image`,
    `  found ${found}/${count}, corner RMS ${cornerRmsPx.toFixed(4)} px`,
  ];
  return { images: count, meanMs, medianMs, maxMs, pngDecodeMs, found, cornerRmsPx, lines };
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  for (const line of runDetectBench(Number(process.argv[2] ?? 8)).lines) console.log(line);
}
