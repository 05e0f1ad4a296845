/**
 * Parallel decoding and detection over many image files with worker threads.
 *
 * Worker count = min(number of files, available cores, `workers` option).
 * Workers load the compiled module dist/detect/detect-worker.js next to this
 * file; when this module runs from TypeScript source (under the test runner,
 * `import.meta.url` ends in .ts) or when one worker suffices, the jobs run
 * inline on the main thread instead, one after another, with the same
 * results and progress reports.
 */
import { Worker } from 'node:worker_threads';
import { availableParallelism } from 'node:os';
import { runDetectJob, type DetectJob, type DetectJobResult } from './job.js';

export type { DetectJob, DetectJobResult } from './job.js';

export interface DetectFilesOptions {
  /** Upper bound on worker threads (default: available cores). */
  workers?: number;
  /** 'auto' (default): threads when compiled and more than one worker is useful; 'inline': main thread only; 'threads': require threads. */
  mode?: 'auto' | 'inline' | 'threads';
  /** Called after every finished file with the count done so far. */
  onProgress?: (done: number, total: number, last: DetectJobResult) => void;
}

/** True when this module was loaded from compiled JavaScript (so a worker can load its sibling .js). */
export function workersAvailable(): boolean {
  return !import.meta.url.endsWith('.ts');
}

/** Worker threads used for `fileCount` files under `opts`. 0 means inline. */
export function plannedWorkerCount(fileCount: number, opts: DetectFilesOptions = {}): number {
  if (opts.mode === 'inline') return 0;
  const n = Math.max(1, Math.min(fileCount, availableParallelism(), opts.workers ?? Infinity));
  if (opts.mode === 'threads') return n;
  return n >= 2 && workersAvailable() ? n : 0;
}

/**
 * Decodes and detects every job; results come back in the order of `jobs`.
 * Unreadable files are reported per result, never thrown. Rejects only if a
 * worker thread itself crashes.
 */
export async function detectFiles(jobs: readonly DetectJob[], opts: DetectFilesOptions = {}): Promise<DetectJobResult[]> {
  const total = jobs.length;
  const results = new Array<DetectJobResult>(total);
  const nWorkers = plannedWorkerCount(total, opts);
  if (opts.mode === 'threads' && !workersAvailable()) {
    throw new Error('detectFiles: worker threads need the compiled module (dist/detect/workers.js); this one runs from TypeScript source');
  }
  let done = 0;
  if (nWorkers === 0) {
    for (let i = 0; i < total; i++) {
      results[i] = await runDetectJob(jobs[i]!);
      done++;
      opts.onProgress?.(done, total, results[i]!);
    }
    return results;
  }
  const workerUrl = new URL('./detect-worker.js', import.meta.url);
  return new Promise<DetectJobResult[]>((resolve, reject) => {
    const workers: Worker[] = [];
    let next = 0;
    let failed = false;
    let finished = false;
    const finish = (err?: Error): void => {
      finished = true;
      for (const w of workers) void w.terminate();
      if (err) reject(err);
      else resolve(results);
    };
    const feed = (w: Worker): void => {
      if (next < total) {
        const index = next++;
        w.postMessage({ index, job: jobs[index] });
      }
    };
    for (let k = 0; k < nWorkers; k++) {
      const w = new Worker(workerUrl);
      workers.push(w);
      w.on('message', (msg: { index: number; out: DetectJobResult }) => {
        if (failed) return;
        results[msg.index] = msg.out;
        done++;
        opts.onProgress?.(done, total, msg.out);
        if (done === total) finish();
        else feed(w);
      });
      w.on('error', (e) => {
        if (failed || finished) return;
        failed = true;
        finish(e);
      });
      w.on('exit', (code) => {
        if (failed || finished) return;
        failed = true;
        finish(new Error(`detection worker stopped unexpectedly (exit code ${code})`));
      });
      feed(w);
    }
  });
}
