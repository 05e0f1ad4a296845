/** Public surface of the generic sparse least-squares solver. */
export type { Manifold, ParameterBlockSpec, ResidualBlock } from './problem.js';
export type { LossFunction } from './loss.js';
export { trivialLoss, huberLoss, cauchyLoss } from './loss.js';
export { Problem, euclideanManifold } from './problem-builder.js';
export type { ParameterBlockEntry, ProblemLayout } from './problem-builder.js';
export { NormalEquations } from './schur.js';
export type { LinearSolveStatus, EvaluationStatus } from './schur.js';
export { solve, checkJacobians, validateLmOptions, resolveLmOptions, DEFAULT_LM_OPTIONS, lmPresets } from './lm.js';
export type {
  LmOptions,
  SolveOptions,
  SolveSummary,
  IterationRecord,
  TerminationType,
  OptionIssue,
  JacobianCheckEntry,
  JacobianCheckReport,
} from './lm.js';
export { computeCovariance, evaluateResidualBlocks, problemCost, Covariance } from './covariance.js';
export type { CovarianceResult, CovarianceOptions, PoorlyConstrained } from './covariance.js';
export { briefReport, fullReport } from './summary.js';
