/**
 * `rigsolve check SESSION.yaml --against RIG.yaml`: is the rig still
 * calibrated? Exit 0 every camera within tolerance, 3 any out, 2 invalid
 * input. Never writes the rig file.
 */
import type { Command } from 'commander';
import { loadSession } from '../io/session.js';
import { loadRigFile } from '../io/rig-file.js';
import { checkRig } from '../rig/check.js';
import { DEFAULT_TOLERANCES, toleranceProblems, type Tolerances } from '../rig/compare.js';
import { checkJson, checkText } from '../report/check.js';
import { EXIT_OUT_OF_TOLERANCE, OptionsError } from '../errors.js';
import { parseNumber } from './simulate.js';
import type { CliContext } from './context.js';

/** Adds --max-shift-mm, --max-rotation-deg and --significance to a command. */
export function toleranceOptions(cmd: Command): Command {
  return cmd
    .option('--max-shift-mm <mm>', `largest acceptable change of a camera position, mm (default ${DEFAULT_TOLERANCES.maxShiftMm})`, parseNumber('--max-shift-mm'))
    .option('--max-rotation-deg <deg>', `largest acceptable change of a camera orientation, degrees (default ${DEFAULT_TOLERANCES.maxRotationDeg})`, parseNumber('--max-rotation-deg'))
    .option('--significance <level>', `significance level of the χ² test (default ${DEFAULT_TOLERANCES.significanceLevel})`, parseNumber('--significance'));
}

export function tolerancesFrom(o: { maxShiftMm?: number; maxRotationDeg?: number; significance?: number }): Tolerances {
  const tol: Tolerances = {
    maxShiftMm: o.maxShiftMm ?? DEFAULT_TOLERANCES.maxShiftMm,
    maxRotationDeg: o.maxRotationDeg ?? DEFAULT_TOLERANCES.maxRotationDeg,
    significanceLevel: o.significance ?? DEFAULT_TOLERANCES.significanceLevel,
  };
  const problems = toleranceProblems(tol);
  if (problems.length) throw new OptionsError('options.tolerance', problems.join('; '));
  return tol;
}

export function registerCheck(program: Command, ctx: CliContext): void {
  toleranceOptions(
    program
      .command('check')
      .summary('check a rig against new data (after a repair, a knock, or on a schedule)')
      .description(
        'Check whether a calibrated rig still holds, using a new session. Reports (a) each camera\'s reprojection RMS on the new ' +
          'data with the reference extrinsics held fixed, (b) a fresh solve and per camera the change in position (mm) and ' +
          'orientation (degrees) with its significance (χ² with 6 degrees of freedom on both covariances), and (c) a verdict per ' +
          'camera against the tolerances. Defaults 1 mm and 0.1° (common practice for metric perception), significance 0.01. ' +
          'The rig file is only read. Exit codes: 0 every camera within tolerance, 3 any camera out of tolerance, 2 invalid input.',
      )
      .argument('<session>', 'new session file (format: rig-session/1)')
      .requiredOption('--against <rig.yaml>', 'reference rig file (format: rig-calibration/1)'),
  )
    .option('--json', 'print the report as JSON')
    .action((sessionPath: string, o: { against: string; json?: boolean; maxShiftMm?: number; maxRotationDeg?: number; significance?: number }) => {
      const tol = tolerancesFrom(o);
      const rig = loadRigFile(o.against);
      const session = loadSession(sessionPath);
      const result = checkRig(session, rig, { tolerances: tol, rigPath: o.against });
      if (o.json) ctx.out(JSON.stringify(checkJson(result, sessionPath, o.against), null, 2));
      else ctx.out(checkText(result, sessionPath, o.against));
      if (!result.withinTolerance) ctx.exitCode = EXIT_OUT_OF_TOLERANCE;
    });
}
