/**
 * rigsolve as a library: `import { loadSession, solveRig, buildRigFile } from 'rigsolve'`.
 *
 * Typical use: loadSession(path) → solveRig(session) → buildRigFile(solution)
 * → writeRigFile(path, rig); renderHtmlReport(solution, rig) for the HTML
 * report; evaluateRig(session, loadRigFile(path)) to see how an existing rig
 * explains a new session. simulate(loadRigDescription(path)) and
 * sessionFromSimulation(sim) make synthetic sessions with known truth.
 *
 * Conventions (docs/formats.md): T_a_b maps points in frame b to frame a;
 * metres and radians in code; covariances are 6x6 row-major over the left
 * perturbation [rx ry rz tx ty tz].
 */
export * from './errors.js';
export * from './linalg/index.js';
export * from './geometry/index.js';
export * from './camera/index.js';
export * from './solver/index.js';
export * from './io/index.js';
export * from './pnp/index.js';

// Rig: solve, evaluate, output.
export {
  solveRig,
  relativeCovariance,
  DEFAULT_RIG_SOLVE_OPTIONS,
  OUTLIER_SIGMAS,
  type RigSolveOptions,
  type RigSolution,
  type CameraResult,
  type RejectedView,
} from './rig/solve.js';
export { evaluateRig, type EvaluateOptions } from './rig/evaluate.js';
export { buildRigFile, rigCameraEntry, positionCovariance } from './rig/output.js';
export { RigSolveError } from './rig/errors.js';
export type { ViewStatus } from './rig/views.js';

// Rig descriptions and simulation.
export { loadRigDescription, loadRigDescriptionCollect, DESCRIPTION_FORMAT } from './rig/description-file.js';
export type { RigDescription, CapturePlan, DescribedCamera, DescribedTarget } from './rig/description.js';
export { simulate, DEFAULT_CAPTURE, type Simulation, type SimulatedDetection, type SimulatedView } from './rig/simulate.js';
export { sessionFromSimulation } from './rig/simulate-session.js';
export { writeSimulation, truthRig } from './rig/simulate-files.js';

// Reports.
export { renderHtmlReport, type HtmlReportOptions } from './report/html.js';
export { SAFETY_CAUTION, cameraTable, solveSummaryText, solveSummaryJson } from './report/summary.js';
