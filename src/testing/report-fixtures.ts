/**
 * Solved synthetic rigs for report tests (simulate → solve), with optional
 * outliers and flipped views so that rejected detections and views appear.
 */
import * as nodePath from 'node:path';
import { loadRigDescription } from '../rig/description-file.js';
import type { CapturePlan } from '../rig/description.js';
import { buildRigFile } from '../rig/output.js';
import { simulate, type Simulation } from '../rig/simulate.js';
import { sessionFromSimulation } from '../rig/simulate-session.js';
import { solveRig, type RigSolution } from '../rig/solve.js';
import type { RigFile } from '../io/types.js';
import { repoRoot } from './paths.js';

export interface SolvedFixture {
  sim: Simulation;
  solution: RigSolution;
  rig: RigFile;
}

export function solvedFixture(description: string, plan: Partial<CapturePlan> = {}): SolvedFixture {
  const sim = simulate(loadRigDescription(nodePath.join(repoRoot(), 'rigs', description)), plan);
  const solution = solveRig(sessionFromSimulation(sim));
  return { sim, solution, rig: buildRigFile(solution) };
}
