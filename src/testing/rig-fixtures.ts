/**
 * Helpers shared by the ground-truth tests of the rig solver.
 */
import * as nodePath from 'node:path';
import { compose, inverse, type Pose } from '../geometry/se3.js';
import { so3Angle } from '../geometry/so3.js';
import { loadRigDescription } from '../rig/description-file.js';
import type { RigDescription } from '../rig/description.js';
import { repoRoot } from './paths.js';

/** A rig description bundled in rigs/ (fresh copy each call, so tests may edit it). */
export function bundledRig(name: string): RigDescription {
  return loadRigDescription(nodePath.join(repoRoot(), 'rigs', name));
}

/** Rotation error (angle of T·truth⁻¹, degrees) and translation error (mm) of an estimated pose. */
export function poseError(T: Pose, truth: Pose): { rotDeg: number; transMm: number } {
  return {
    rotDeg: (so3Angle(compose(T, inverse(truth)).R) * 180) / Math.PI,
    transMm: 1000 * Math.hypot(T.t[0]! - truth.t[0]!, T.t[1]! - truth.t[1]!, T.t[2]! - truth.t[2]!),
  };
}
