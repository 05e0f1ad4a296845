/**
 * Worker-thread entry for parallel detection (see workers.ts). Receives
 * `{ index, job }` messages and answers `{ index, out }`; the corner buffer is
 * transferred, not copied.
 */
import { parentPort } from 'node:worker_threads';
import { runDetectJob, type DetectJob } from './job.js';

if (!parentPort) throw new Error('detect-worker.js must be started as a worker thread');
const port = parentPort;
port.on('message', (msg: { index: number; job: DetectJob }) => {
  void runDetectJob(msg.job).then((out) => {
    const transfer = out.result?.found ? [out.result.corners.buffer as ArrayBuffer] : [];
    port.postMessage({ index: msg.index, out }, transfer);
  });
});
