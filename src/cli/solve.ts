/**
 * `rigsolve solve SESSION.yaml --out RIG.yaml [--report REPORT.html]`: the
 * main job. Summary table on stdout (or JSON with --json). On a terminal,
 * stderr shows progress (loading, PnP over the views) and the iteration log;
 * nothing is printed there when stderr is not a terminal or with --quiet.
 * Exit 0 solved, 1 ran but failed, 2 invalid input.
 */
import * as fs from 'node:fs';
import * as nodePath from 'node:path';
import type { Command } from 'commander';
import { loadSession } from '../io/session.js';
import { writeRigFile } from '../io/rig-file.js';
import { writeFileAtomic } from '../io/atomic.js';
import { buildRigFile } from '../rig/output.js';
import { solveRig } from '../rig/solve.js';
import type { IterationRecord } from '../solver/index.js';
import { renderHtmlReport } from '../report/html.js';
import { loadRigDescription } from '../rig/description-file.js';
import { solveSummaryJson, solveSummaryText } from '../report/summary.js';
import { EXIT_FAILED, OptionsError } from '../errors.js';
import { RigSolveError } from '../rig/errors.js';
import type { CliContext } from './context.js';
import { commandProgress } from './progress.js';
import { detectionReportLines, sessionWithDetections } from '../detect/session-detect.js';
import { noBoardLines, runImageDetection } from './detect.js';
import { parseNumber } from './simulate.js';

/** One iteration-log line. */
export function iterationLine(stage: string, r: IterationRecord): string {
  return `  [${stage}] ${String(r.iteration).padStart(3)}  cost ${r.cost.toExponential(4)}  Δcost ${r.costChange.toExponential(2)}  |g| ${r.gradientMaxNorm.toExponential(2)}  |step| ${r.stepNorm.toExponential(2)}  λ ${r.lambda.toExponential(1)}${r.accepted ? '' : '  (rejected)'}`;
}

/** Refuses early (before a long solve) to overwrite outputs without --force, or to write two outputs to one path. */
export function checkOutputs(paths: (string | undefined)[], force: boolean): void {
  const given = paths.filter((p): p is string => p !== undefined);
  const resolved = given.map((p) => nodePath.resolve(p));
  if (new Set(resolved).size < resolved.length) {
    throw new OptionsError('output.same_path', `the output files must differ (got ${given.join(' and ')})`);
  }
  if (force) return;
  for (const p of given) if (fs.existsSync(p)) throw new OptionsError('output.exists', `${p} already exists; pass --force to overwrite it`);
}

export function registerSolve(program: Command, ctx: CliContext): void {
  program
    .command('solve')
    .summary('calibrate the rig from a session and write the rig file')
    .description(
      'Solve the extrinsics of every camera from a session (format: rig-session/1) and its detections: PnP per view, ' +
        'initialisation over the view graph, robust joint bundle adjustment, outlier rejection and covariance. ' +
        'Writes the rig file (format: rig-calibration/1) atomically and prints a summary per camera; with --report ' +
        'also a self-contained HTML report. Progress and the iteration log go to stderr when it is a terminal. ' +
        "When the session's detections: is an image pattern (e.g. photos/{camera}/{frame}.png, relative to the session; " +
        'see rigsolve detect --help), the checkerboards are first detected in the photos, in memory. ' +
        'Exit codes: 0 solved, 1 ran but failed (no convergence, disconnected cameras), 2 invalid input.',
    )
    .argument('<session>', 'session file (YAML or JSON)')
    .requiredOption('--out <rig.yaml>', 'rig file to write')
    .option('--report <report.html>', 'also write a self-contained HTML report (rig views, residuals, coverage)')
    .option('--force', 'overwrite --out and --report if they exist')
    .option('--loss <name>', 'robust loss of the first joint solve: huber, cauchy or none', 'huber')
    .option('--prior <rig-description>', 'design prior: a rig description (see rigs/) whose cameras carry sigma_position_mm and sigma_rotation_deg')
    .option('--json', 'print the summary as JSON instead of a table')
    .option('--quiet', 'no progress or iteration log on stderr')
    .option('--workers <n>', 'worker threads for detection when detections: is an image pattern (default: one per core)', parseNumber('--workers', { integer: true, min: 1 }))
    .action(
      async (
        sessionPath: string,
        o: { out: string; report?: string; force?: boolean; loss: string; json?: boolean; quiet?: boolean; prior?: string; workers?: number },
      ) => {
        if (!['huber', 'cauchy', 'none'].includes(o.loss)) {
          throw new OptionsError('options.loss', `unknown --loss "${o.loss}"; choose huber, cauchy or none`);
        }
        checkOutputs([o.out, o.report], Boolean(o.force));
        const prior = o.prior ? loadRigDescription(o.prior) : undefined;
        const progress = commandProgress(ctx.io, o.quiet);
        progress.status(`loading ${sessionPath} …`);
        let session;
        try {
          session = loadSession(sessionPath, { detections: 'csv-or-images' });
        } finally {
          progress.end();
        }
        if (session.detectionsPattern !== undefined) {
          // detections: is an image pattern: detect in memory first (nothing is written besides the outputs).
          const det = await runImageDetection(session, session.detectionsPattern, ctx, o);
          if (det.found === 0) {
            for (const line of noBoardLines(det)) ctx.err(line);
            ctx.exitCode = EXIT_FAILED;
            return;
          }
          if (!o.quiet) for (const line of detectionReportLines(det)) ctx.err(line);
          session = sessionWithDetections(session, det);
        }
        progress.log(`loaded ${sessionPath}: ${session.cameras.length} cameras, ${session.frames.length} frames, ${session.detections.count} detections`);
        let solution;
        try {
          solution = solveRig(session, {
            loss: o.loss as 'huber' | 'cauchy' | 'none',
            ...(prior ? { prior } : {}),
            ...(progress.enabled
              ? {
                  onIteration: (stage: string, r: IterationRecord) => progress.log(iterationLine(stage, r)),
                  onProgress: (stage: string, done: number, total: number) => {
                    progress.update(stage, done, total);
                    if (done >= total) progress.end();
                  },
                }
              : {}),
          });
        } finally {
          progress.end();
        }
        if (!solution.converged) {
          // A rig that did not converge is not written: exit 1 with what to do.
          throw new RigSolveError(
            'rig.no_convergence',
            `the joint solve did not converge (${solution.summary.message}); no rig file was written → check the intrinsics and ` +
              'the detections of the cameras with the largest RMS (rigsolve report shows them), and capture more varied views',
          );
        }
        const rig = buildRigFile(solution);
        writeRigFile(o.out, rig, { force: Boolean(o.force) });
        if (o.report) {
          const html = renderHtmlReport(solution, rig, { provenance: `Residuals and uncertainties from the solve of ${sessionPath}.` });
          writeFileAtomic(o.report, html, { force: Boolean(o.force) });
        }
        if (o.json) {
          ctx.out(JSON.stringify({ ...solveSummaryJson(rig, solution, o.out), report: o.report ?? null }, null, 2));
        } else {
          ctx.out(solveSummaryText(rig, solution, o.out));
          if (o.report) ctx.out(`report: ${o.report}`);
        }
      },
    );
}
