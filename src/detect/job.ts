/**
 * One detection job: read an image file, decode it to grey, find the
 * checkerboard. Used inline and inside worker threads (detect-worker.ts).
 */
import { readGreyImage } from './image.js';
import { detectCheckerboard, type BoardSize, type CheckerboardOptions, type CheckerboardResult } from './checkerboard.js';
import { RigCalError } from '../errors.js';

export interface DetectJob {
  /** Image file (PNG or JPEG). */
  file: string;
  /** Declared inner corners of the target. */
  board: BoardSize;
  options?: CheckerboardOptions;
}

export interface DetectJobResult {
  file: string;
  /** Image size in px, when the file could be decoded. */
  width?: number;
  height?: number;
  /** Detection outcome, when the file could be decoded. */
  result?: CheckerboardResult;
  /** Why the file could not be read or decoded. */
  error?: { code: string; message: string };
  /** Wall time for decoding plus detection, in milliseconds. */
  elapsedMs: number;
}

/** Runs one job; never throws for unreadable images (reported in `error`). */
export async function runDetectJob(job: DetectJob): Promise<DetectJobResult> {
  const t0 = performance.now();
  try {
    const image = await readGreyImage(job.file);
    const result = detectCheckerboard(image, job.board, job.options);
    return { file: job.file, width: image.width, height: image.height, result, elapsedMs: performance.now() - t0 };
  } catch (e) {
    const code = e instanceof RigCalError ? e.code : 'detect.failed';
    return { file: job.file, error: { code, message: (e as Error).message }, elapsedMs: performance.now() - t0 };
  }
}
