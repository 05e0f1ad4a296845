/**
 * `rigsolve compare A.yaml B.yaml`: per-camera change from rig file A to B
 * with its significance. Exit 0 every camera within tolerance, 3 any out,
 * 2 invalid input.
 */
import type { Command } from 'commander';
import { loadRigFile } from '../io/rig-file.js';
import { compareRigFiles } from '../rig/compare.js';
import { comparisonJson, comparisonText } from '../report/check.js';
import { EXIT_OUT_OF_TOLERANCE } from '../errors.js';
import { toleranceOptions, tolerancesFrom } from './check.js';
import type { CliContext } from './context.js';

export function registerCompare(program: Command, ctx: CliContext): void {
  toleranceOptions(
    program
      .command('compare')
      .summary('per-camera change between two rig files, with its significance')
      .description(
        'Compare two rig files of the same rig (A = reference, B = newer): per camera the change in position (mm) and ' +
          'orientation (degrees), its significance (χ² with 6 degrees of freedom on both covariances; n/a when neither file ' +
          'carries uncertainty) and a verdict against the tolerances. Both files must share the root camera. ' +
          'Exit codes: 0 every camera within tolerance, 3 any out (or present in only one file), 2 invalid input.',
      )
      .argument('<a>', 'reference rig file')
      .argument('<b>', 'rig file to compare with it'),
  )
    .option('--json', 'print the report as JSON')
    .action((aPath: string, bPath: string, o: { json?: boolean; maxShiftMm?: number; maxRotationDeg?: number; significance?: number }) => {
      const tol = tolerancesFrom(o);
      const a = loadRigFile(aPath);
      const b = loadRigFile(bPath);
      const cmp = compareRigFiles(a, b, tol, { a: aPath, b: bPath });
      if (o.json) ctx.out(JSON.stringify(comparisonJson(cmp, aPath, bPath), null, 2));
      else ctx.out(comparisonText(cmp, aPath, bPath));
      if (!cmp.withinTolerance) ctx.exitCode = EXIT_OUT_OF_TOLERANCE;
    });
}
