/**
 * `rigsolve solve SESSION.yaml --out RIG.yaml`: the main job. Summary table
 * on stdout (or JSON with --json), iteration log on stderr (silenced by
 * --quiet). Exit 0 solved, 1 ran but failed, 2 invalid input.
 */
import type { Command } from 'commander';
import { loadSession } from '../io/session.js';
import { writeRigFile } from '../io/rig-file.js';
import { buildRigFile } from '../rig/output.js';
import { solveRig } from '../rig/solve.js';
import { loadRigDescription } from '../rig/description-file.js';
import { solveSummaryJson, solveSummaryText } from '../report/summary.js';
import { EXIT_FAILED, OptionsError } from '../errors.js';
import type { CliContext } from './context.js';

export function registerSolve(program: Command, ctx: CliContext): void {
  program
    .command('solve')
    .summary('calibrate the rig from a session and write the rig file')
    .description(
      'Solve the extrinsics of every camera from a session (format: rig-session/1) and its detections: PnP per view, ' +
        'initialisation over the view graph, robust joint bundle adjustment, outlier rejection and covariance. ' +
        'Writes the rig file (format: rig-calibration/1) atomically and prints a summary per camera. ' +
        'Exit codes: 0 solved, 1 ran but failed (no convergence, disconnected cameras), 2 invalid input.',
    )
    .argument('<session>', 'session file (YAML or JSON)')
    .requiredOption('--out <rig.yaml>', 'rig file to write')
    .option('--force', 'overwrite --out if it exists')
    .option('--loss <name>', 'robust loss of the first joint solve: huber, cauchy or none', 'huber')
    .option('--prior <rig-description>', 'design prior: a rig description (see rigs/) whose cameras carry sigma_position_mm and sigma_rotation_deg')
    .option('--json', 'print the summary as JSON instead of a table')
    .option('--quiet', 'no iteration log on stderr')
    .action((sessionPath: string, o: { out: string; force?: boolean; loss: string; json?: boolean; quiet?: boolean; prior?: string }) => {
      if (!['huber', 'cauchy', 'none'].includes(o.loss)) {
        throw new OptionsError('options.loss', `unknown --loss "${o.loss}": choose huber, cauchy or none`);
      }
      const session = loadSession(sessionPath);
      const prior = o.prior ? loadRigDescription(o.prior) : undefined;
      const log = o.quiet ? undefined : (line: string) => ctx.err(line);
      log?.(`loaded ${sessionPath}: ${session.cameras.length} cameras, ${session.frames.length} frames, ${session.detections.count} detections`);
      const solution = solveRig(session, {
        loss: o.loss as 'huber' | 'cauchy' | 'none',
        ...(prior ? { prior } : {}),
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
