/**
 * Designed camera poses from a rig description, expressed relative to the
 * session's reference camera, for use as a prior.
 */
import { compose, inverse, type Pose } from '../geometry/se3.js';
import type { Session } from '../io/types.js';
import { RigSolveError } from './errors.js';
import type { RigDescription } from './description.js';

export interface DesignPose {
  /** Designed T_ref_cam. */
  T: Pose;
  sigmaPositionM: number;
  sigmaRotationRad: number;
}

/** Default design sigmas when the description gives none (a careful hand measurement; common practice). */
export const DEFAULT_DESIGN_SIGMA_POSITION_M = 0.005;
export const DEFAULT_DESIGN_SIGMA_ROTATION_RAD = Math.PI / 180;

/** Per session camera, its designed pose (or null when the description lacks it). */
export function designPoses(desc: RigDescription, session: Session, warnings: string[]): (DesignPose | null)[] {
  const byName = new Map(desc.cameras.map((c) => [c.spec.name, c]));
  const ref = byName.get(session.referenceCamera);
  if (!ref) {
    throw new RigSolveError(
      'rig.prior_reference',
      `the prior ${desc.path} has no camera named "${session.referenceCamera}" (the session's reference camera): add it to the prior so the other cameras can be placed relative to it`,
    );
  }
  const T_ref_body = inverse(ref.T_body_cam);
  const missing: string[] = [];
  const out = session.cameras.map((c) => {
    const d = byName.get(c.name);
    if (!d) {
      missing.push(c.name);
      return null;
    }
    return {
      T: compose(T_ref_body, d.T_body_cam),
      sigmaPositionM: d.sigmaPositionM ?? DEFAULT_DESIGN_SIGMA_POSITION_M,
      sigmaRotationRad: d.sigmaRotationRad ?? DEFAULT_DESIGN_SIGMA_ROTATION_RAD,
    };
  });
  if (missing.length > 0) warnings.push(`the prior ${desc.path} has no design pose for ${missing.join(', ')}: ${missing.length > 1 ? 'they are' : 'it is'} solved from the data alone`);
  return out;
}

/** Groups of cameras not linked to the reference by data are acceptable when every camera in them has a design pose. */
export function mergeGroupsCoveredByPrior(groups: number[][], reference: number, design: (DesignPose | null)[]): number[][] {
  const refGroup = groups.find((g) => g.includes(reference));
  if (!refGroup) return groups;
  const rest = groups.filter((g) => g !== refGroup);
  const covered = rest.filter((g) => g.every((c) => design[c]));
  const uncovered = rest.filter((g) => !g.every((c) => design[c]));
  return [[...refGroup, ...covered.flat()], ...uncovered];
}
