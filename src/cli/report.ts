/**
 * `rigsolve report RIG.yaml SESSION.yaml --out REPORT.html`: the HTML report
 * of how well a rig file explains a session. The rig's extrinsics and
 * intrinsics are held fixed and only each frame's target pose is fitted
 * (evaluateRig in src/rig/evaluate.ts), so the residuals, coverage and
 * per-frame RMS describe the rig file as it is, not a fresh solve.
 * Exit 0 written, 2 invalid input (including a rig that does not match the session).
 */
import type { Command } from 'commander';
import { loadRigFile } from '../io/rig-file.js';
import { loadSession } from '../io/session.js';
import { writeFileAtomic } from '../io/atomic.js';
import { evaluateRig } from '../rig/evaluate.js';
import { buildRigFile } from '../rig/output.js';
import { renderHtmlReport } from '../report/html.js';
import type { CliContext } from './context.js';
import { commandProgress } from './progress.js';
import { checkOutputs } from './solve.js';

export function registerReport(program: Command, ctx: CliContext): void {
  program
    .command('report')
    .summary('write an HTML report of a rig file checked against a session')
    .description(
      'Write a self-contained HTML report (rig seen from above and from the side, residuals, coverage of every image, ' +
        'RMS per frame) of a rig file (format: rig-calibration/1) evaluated on a session: the rig\'s extrinsics and ' +
        'intrinsics are held fixed and only the target pose of each frame is fitted, with the same outlier rule as solve. ' +
        'The ± values shown are the rig file\'s. Exit codes: 0 written, 2 invalid input.',
    )
    .argument('<rig>', 'rig file (YAML or JSON)')
    .argument('<session>', 'session file (YAML or JSON)')
    .requiredOption('--out <report.html>', 'HTML file to write')
    .option('--force', 'overwrite --out if it exists')
    .option('--title <text>', 'page title')
    .option('--quiet', 'no progress on stderr')
    .action((rigPath: string, sessionPath: string, o: { out: string; force?: boolean; title?: string; quiet?: boolean }) => {
      checkOutputs([o.out], Boolean(o.force));
      const rigFile = loadRigFile(rigPath);
      const progress = commandProgress(ctx.io, o.quiet);
      progress.status(`loading ${sessionPath} …`);
      let session;
      try {
        session = loadSession(sessionPath);
      } finally {
        progress.end();
      }
      let solution;
      try {
        solution = evaluateRig(session, rigFile, rigPath, { onProgress: (stage, done, total) => progress.update(stage, done, total) });
      } finally {
        progress.end();
      }
      const rig = { ...buildRigFile(solution), name: rigFile.name };
      const html = renderHtmlReport(solution, rig, {
        ...(o.title ? { title: o.title } : {}),
        provenance: `Residuals of ${sessionPath} re-evaluated at the extrinsics and intrinsics of ${rigPath} (only each frame's target pose fitted); ± values are the rig file's.`,
      });
      writeFileAtomic(o.out, html, { force: Boolean(o.force) });
      ctx.out(
        `rig "${rigFile.name}" on session "${session.name}": RMS ${solution.rmsPx.toFixed(3)} px, sigma0 ${solution.sigma0.toFixed(3)}, ` +
          `${solution.framesUsed} frames used, ${solution.rejectedViews.length} views set aside`,
      );
      ctx.out(`wrote ${o.out}`);
    });
}
