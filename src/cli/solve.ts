/**
 * `rigsolve solve SESSION.yaml --out RIG.yaml`: the main job. Summary table
 * on stdout (or JSON with --json), iteration log on stderr (silenced by
 * --quiet). Exit 0 solved, 1 ran but failed, 2 invalid input.
 */
import * as fs from 'node:fs';
import type { Command } from 'commander';
import { loadSession } from '../io/session.js';
import { writeRigFile } from '../io/rig-file.js';
import { buildRigFile } from '../rig/output.js';
import { solveRig } from '../rig/solve.js';
import { solveSummaryJson, solveSummaryText } from '../report/summary.js';
import { EXIT_FAILED, OptionsError } from '../errors.js';
import { detectionReportLines, sessionWithDetections } from '../detect/session-detect.js';
import type { CliContext } from './context.js';
import { noBoardLines, runImageDetection } from './detect.js';
import { parseNumber } from './simulate.js';

export function registerSolve(program: Command, ctx: CliContext): void {
  program
    .command('solve')
    .summary('calibrate the rig from a session and write the rig file')
    .description(
      'Solve the extrinsics of every camera from a session (format: rig-session/1) and its detections: PnP per view, ' +
        'initialisation over the view graph, robust joint bundle adjustment, outlier rejection and covariance. ' +
        'Writes the rig file (format: rig-calibration/1) atomically and prints a summary per camera. ' +
        "When the session's detections: is an image pattern (e.g. photos/{camera}/{frame}.png, relative to the session; " +
        'see rigsolve detect --help), the checkerboards are first detected in the photos, in memory. ' +
        'Exit codes: 0 solved, 1 ran but failed (no convergence, disconnected cameras), 2 invalid input.',
    )
    .argument('<session>', 'session file (YAML or JSON)')
    .requiredOption('--out <rig.yaml>', 'rig file to write')
    .option('--force', 'overwrite --out if it exists')
    .option('--loss <name>', 'robust loss of the first joint solve: huber, cauchy or none', 'huber')
    .option('--json', 'print the summary as JSON instead of a table')
    .option('--quiet', 'no iteration log or detection progress on stderr')
    .option('--workers <n>', 'worker threads for detection when detections: is an image pattern (default: one per core)', parseNumber('--workers', { integer: true, min: 1 }))
    .action(async (sessionPath: string, o: { out: string; force?: boolean; loss: string; json?: boolean; quiet?: boolean; workers?: number }) => {
      if (!['huber', 'cauchy', 'none'].includes(o.loss)) {
        throw new (class extends Error {})(`unknown --loss "${o.loss}"`);
      }
      let session = loadSession(sessionPath, { detections: 'csv-or-images' });
      const log = o.quiet ? undefined : (line: string) => ctx.err(line);
      if (session.detectionsPattern !== undefined) {
        // detections: is an image pattern: detect in memory first (nothing is written besides --out).
        if (!o.force && fs.existsSync(o.out)) throw new OptionsError('output.exists', `${o.out} already exists; pass --force to overwrite it`);
        const det = await runImageDetection(session, session.detectionsPattern, ctx, o);
        if (det.found === 0) {
          for (const line of noBoardLines(det)) ctx.err(line);
          ctx.exitCode = EXIT_FAILED;
          return;
        }
        if (log) for (const line of detectionReportLines(det)) log(line);
        session = sessionWithDetections(session, det);
      }
      log?.(`loaded ${sessionPath}: ${session.cameras.length} cameras, ${session.frames.length} frames, ${session.detections.count} detections`);
      const solution = solveRig(session, {
        loss: o.loss as 'huber' | 'cauchy' | 'none',
        ...(log
          ? {
              onIteration: (stage, r) =>
                log(
                  `  [${stage}] cost ${r.cost.toExponential(4)}  Δcost ${r.costChange.toExponential(2)}  |g| ${r.gradientMaxNorm.toExponential(2)}  |step| ${r.stepNorm.toExponential(2)}  λ ${r.lambda.toExponential(1)}`,
                ),
            }
          : {}),
      });
      const rig = buildRigFile(solution);
      writeRigFile(o.out, rig, { force: Boolean(o.force) });
      if (o.json) ctx.out(JSON.stringify(solveSummaryJson(rig, solution, o.out), null, 2));
      else ctx.out(solveSummaryText(rig, solution, o.out));
      if (!solution.converged) ctx.exitCode = EXIT_FAILED;
    });
}
