// Type-checked by test/readme-api.test.ts against the built declarations (dist/index.d.ts),
// importing the package by its own name as a user would.
import { buildRigFile, loadSession, solveRig, type RigFile, type RigSolution, type Session } from 'rigsolve';

export function positionsMm(sessionPath: string): Record<string, [number, number, number]> {
  const session: Session = loadSession(sessionPath);
  const solution: RigSolution = solveRig(session, { loss: 'cauchy' });
  const rig: RigFile = buildRigFile(solution);
  const out: Record<string, [number, number, number]> = {};
  for (const c of rig.cameras) out[c.name] = [c.translation[0] * 1000, c.translation[1] * 1000, c.translation[2] * 1000];
  return out;
}
