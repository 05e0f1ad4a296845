/**
 * Parallel detection over files. Under the test runner this module runs from
 * TypeScript source, so detectFiles runs inline; the worker-thread path is
 * exercised by compiling workers.ts and detect-worker.ts with tsc into a
 * scratch folder inside the repository (so that node_modules resolves) and
 * importing the compiled module.
 */
import { afterAll, beforeAll, describe, expect, test } from 'vitest';
import { execFileSync } from 'node:child_process';
import { mkdirSync, rmSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { availableParallelism } from 'node:os';
import { renderBoard } from '../synth/render-board.js';
import { sampleVisibleBoard } from '../synth/board-poses.js';
import { rng } from '../testing/numeric.js';
import { encodeJpeg, encodePng } from './image.js';
import { detectFiles, plannedWorkerCount, workersAvailable, type DetectJob, type DetectJobResult } from './workers.js';

const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const scratch = path.join(repoRoot, 'test-artifacts', `detect-workers-${process.pid}`);
const board = { columns: 7, rows: 6, squareM: 0.03 };
const cam = { width: 480, height: 360, fx: 400, fy: 400, cx: 239.5, cy: 179.5, distortion: [-0.2, 0.05, 0, 0, 0] };
const jobs: DetectJob[] = [];
const truth: Float64Array[] = [];

beforeAll(() => {
  mkdirSync(path.join(scratch, 'images'), { recursive: true });
  const u = rng(3);
  for (let n = 0; n < 5; n++) {
    const T = sampleVisibleBoard(u, cam, board, { maxTiltRad: 0.5 });
    const r = renderBoard(cam, board, T, { blurSigmaPx: 0.7, noiseSigma: 2 / 255, seed: n });
    const file = path.join(scratch, 'images', `cam0_${n}.${n % 2 ? 'jpg' : 'png'}`);
    writeFileSync(file, n % 2 ? encodeJpeg(r.image, 95) : encodePng(r.image));
    jobs.push({ file, board: { columns: board.columns, rows: board.rows } });
    truth.push(r.cornersPx);
  }
  const junk = path.join(scratch, 'images', 'broken.png');
  writeFileSync(junk, 'not an image');
  jobs.push({ file: junk, board: { columns: 7, rows: 6 } });
  jobs.push({ file: path.join(scratch, 'images', 'missing.png'), board: { columns: 7, rows: 6 } });
});

afterAll(() => rmSync(scratch, { recursive: true, force: true }));

function checkResults(results: DetectJobResult[]): void {
  expect(results.map((r) => r.file)).toEqual(jobs.map((j) => j.file));
  for (let n = 0; n < 5; n++) {
    const res = results[n]!.result;
    expect(res?.found).toBe(true);
    if (!res?.found) continue;
    for (let i = 0; i < 42; i++) {
      expect(Math.hypot(res.corners[2 * i]! - truth[n]![2 * i]!, res.corners[2 * i + 1]! - truth[n]![2 * i + 1]!)).toBeLessThan(0.25);
    }
  }
  expect(results[5]!.error?.code).toBe('image.unreadable');
  expect(results[6]!.error?.code).toBe('image.unreadable');
}

describe('detectFiles', () => {
  test('from source it runs inline, in order, with one progress report per file', async () => {
    expect(workersAvailable()).toBe(false);
    expect(plannedWorkerCount(jobs.length)).toBe(0);
    const seen: number[] = [];
    const results = await detectFiles(jobs, { onProgress: (done, total) => (expect(total).toBe(jobs.length), seen.push(done)) });
    expect(seen).toEqual([1, 2, 3, 4, 5, 6, 7]);
    checkResults(results);
    await expect(detectFiles(jobs, { mode: 'threads' })).rejects.toThrow(/compiled module/);
  });

  test('compiled, it runs on worker threads (count = min(files, cores)) with the same results', async () => {
    const out = path.join(scratch, 'build');
    const tsc = path.join(repoRoot, 'node_modules', 'typescript', 'bin', 'tsc');
    execFileSync(process.execPath, [
      tsc, '--outDir', out, '--rootDir', path.join(repoRoot, 'src'), '--module', 'nodenext', '--moduleResolution', 'nodenext',
      '--target', 'es2022', '--strict', '--skipLibCheck', '--types', 'node',
      path.join(repoRoot, 'src/detect/workers.ts'), path.join(repoRoot, 'src/detect/detect-worker.ts'),
    ]);
    const compiled = (await import(pathToFileURL(path.join(out, 'detect', 'workers.js')).href)) as typeof import('./workers.js');
    expect(compiled.workersAvailable()).toBe(true);
    expect(compiled.plannedWorkerCount(jobs.length, { mode: 'threads' })).toBe(Math.min(jobs.length, availableParallelism()));
    expect(compiled.plannedWorkerCount(1)).toBe(0);
    let last = 0;
    const results = await compiled.detectFiles(jobs, { mode: 'threads', workers: 2, onProgress: (done) => (last = Math.max(last, done)) });
    expect(last).toBe(jobs.length);
    checkResults(results);
    const inline = await detectFiles(jobs);
    for (let n = 0; n < 5; n++) {
      const a = results[n]!.result, b = inline[n]!.result;
      if (a?.found && b?.found) expect(Array.from(a.corners)).toEqual(Array.from(b.corners));
    }
  });
});
