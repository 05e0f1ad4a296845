/**
 * Simulated rigs for the check / compare / export tests: the stereo bench
 * plus a third forward-looking camera between and above the pair, and a way
 * to knock one camera by a known amount before simulating.
 */
import * as nodePath from 'node:path';
import { compose, poseFrom, type Pose } from '../geometry/se3.js';
import { so3Exp } from '../geometry/so3.js';
import { loadRigDescription, mountPose } from '../rig/description-file.js';
import type { RigDescription } from '../rig/description.js';
import { repoRoot } from './paths.js';

/** rigs/stereo-bench.yaml with a third camera "middle" 5 cm above the pair, looking forward and 5° down. */
export function threeCameraBench(): RigDescription {
  const d = loadRigDescription(nodePath.join(repoRoot(), 'rigs', 'stereo-bench.yaml'));
  const right = d.cameras.find((c) => c.spec.name === 'right')!;
  const middle = {
    ...right,
    spec: { ...right.spec, name: 'middle', params: Float64Array.from(right.spec.params) },
    T_body_cam: mountPose([0.01, 0, 0.05], [0, 5, 0]),
  };
  return { ...d, name: 'three-camera-bench', cameras: [...d.cameras, middle] };
}

/**
 * The same description with one camera moved in the body frame: translated
 * by shiftM (metres, body axes) and rotated by rotDeg about the unit axis
 * (body axes), on the left: T_body_cam ← exp([axis·rot, shift])·T_body_cam
 * with the rotation applied about the camera's own centre.
 */
export function knockCamera(d: RigDescription, name: string, shiftM: [number, number, number], axis: [number, number, number], rotDeg: number): RigDescription {
  const a = (rotDeg * Math.PI) / 180;
  const n = Math.hypot(...axis);
  const R = so3Exp([(axis[0] * a) / n, (axis[1] * a) / n, (axis[2] * a) / n]);
  return {
    ...d,
    cameras: d.cameras.map((c) => {
      if (c.spec.name !== name) return c;
      const T = c.T_body_cam;
      // Rotate about the camera centre, then shift.
      const moved: Pose = compose(poseFrom(R, [0, 0, 0]), poseFrom(T.R, [0, 0, 0]));
      moved.t.set([T.t[0]! + shiftM[0], T.t[1]! + shiftM[1], T.t[2]! + shiftM[2]]);
      return { ...c, T_body_cam: moved };
    }),
  };
}
