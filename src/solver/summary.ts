/** Plain-text renderings of a SolveSummary. */
import type { SolveSummary } from './lm.js';

/** One line: termination, cost change, iterations, time. */
export function briefReport(s: SolveSummary): string {
  return (
    `${s.termination}: cost ${s.initialCost.toExponential(6)} → ${s.finalCost.toExponential(6)}, ` +
    `${s.iterations.length} iterations (${s.acceptedSteps} accepted, ${s.rejectedSteps} rejected), ` +
    `${s.totalSeconds.toFixed(3)} s — ${s.message}`
  );
}

/** Multi-line report: problem size, per-iteration table, termination. */
export function fullReport(s: SolveSummary): string {
  const lines: string[] = [];
  lines.push('Levenberg–Marquardt solve');
  lines.push(`  residuals m            ${s.numResiduals}`);
  lines.push(`  free parameters n      ${s.numFreeParameters}`);
  lines.push(`  parameter blocks       ${s.numParameterBlocks} (${s.numEliminatedBlocks} eliminated)`);
  lines.push(`  residual blocks        ${s.numResidualBlocks}`);
  lines.push(`  reduced system size    ${s.reducedSystemSize}`);
  if (s.jacobianCheck) {
    lines.push(`  Jacobian check         ${s.jacobianCheck.ok ? 'passed' : 'FAILED'} (max relative error ${s.jacobianCheck.maxRelativeError.toExponential(2)})`);
  }
  lines.push('');
  lines.push(' iter         cost      change   max|grad|      |step|      lambda    gain  acc   time_s');
  for (const r of s.iterations) {
    lines.push(
      `${String(r.iteration).padStart(5)} ${r.cost.toExponential(5).padStart(12)} ${r.costChange.toExponential(3).padStart(11)} ` +
        `${r.gradientMaxNorm.toExponential(3).padStart(11)} ${r.stepNorm.toExponential(3).padStart(11)} ${r.lambda.toExponential(3).padStart(11)} ` +
        `${(Number.isFinite(r.gainRatio) ? r.gainRatio.toFixed(3) : 'n/a').padStart(7)} ${r.accepted ? 'yes' : ' no'}  ${r.timeSeconds.toFixed(4).padStart(7)}`,
    );
  }
  lines.push('');
  lines.push(`  initial cost           ${s.initialCost.toExponential(8)}`);
  lines.push(`  final cost             ${s.finalCost.toExponential(8)}`);
  lines.push(`  accepted / rejected    ${s.acceptedSteps} / ${s.rejectedSteps}`);
  lines.push(`  total time             ${s.totalSeconds.toFixed(4)} s`);
  lines.push(`  termination            ${s.termination}: ${s.message}`);
  return lines.join('\n');
}
