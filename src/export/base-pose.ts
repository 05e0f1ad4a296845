/**
 * Mount pose of the root camera on a robot base, from command-line values
 * ("x,y,z,roll,pitch,yaw" in metres and degrees) or from a small YAML file:
 *
 *   format: mount-pose/1          # optional
 *   translation: [x, y, z]        # metres, in the base frame
 *   rpy_deg: [roll, pitch, yaw]   # or quaternion_wxyz: [w, x, y, z]
 *   frame: body                   # optional: body (default) or optical
 *
 * `frame` says which frame of the root camera the pose places: its
 * body-convention frame (x forward, y left, z up; as rig descriptions'
 * mount_rpy_deg) or its optical frame.
 */
import { z } from 'zod';
import { poseFrom, type Pose } from '../geometry/se3.js';
import { quatToMatrix, rpyToMatrix } from '../geometry/rotation.js';
import { OptionsError } from '../errors.js';
import { IssueCollector } from '../io/issues.js';
import { parseYaml, readTextFile, zodIssuesToInput } from '../io/yaml-source.js';

const RAD = Math.PI / 180;
export const MOUNT_POSE_FORMAT = 'mount-pose/1';

export interface MountPose {
  T_base_mount: Pose;
  frame?: 'body' | 'optical';
}

/** "x,y,z,roll,pitch,yaw" (metres, degrees) → pose. Throws OptionsError naming the problem. */
export function parseBasePoseValues(text: string): Pose {
  const parts = text.split(',').map((s) => s.trim());
  const v = parts.map(Number);
  if (parts.length !== 6 || parts.some((p) => p === '') || !v.every(Number.isFinite)) {
    throw new OptionsError('options.base_pose', `--base-pose expects six numbers x,y,z,roll,pitch,yaw (metres, degrees), got "${text}"`);
  }
  return poseFrom(rpyToMatrix(v[3]! * RAD, v[4]! * RAD, v[5]! * RAD), v.slice(0, 3));
}

const vec3 = z.tuple([z.number(), z.number(), z.number()]);
const mountSchema = z.strictObject({
  format: z.literal(MOUNT_POSE_FORMAT).optional(),
  translation: vec3,
  rpy_deg: vec3.optional(),
  quaternion_wxyz: z.tuple([z.number(), z.number(), z.number(), z.number()]).optional(),
  frame: z.enum(['body', 'optical']).optional(),
});

const HELP = {
  translation: 'three numbers [x, y, z] in metres',
  rpy_deg: 'three numbers [roll, pitch, yaw] in degrees',
  quaternion_wxyz: 'four numbers [w, x, y, z]',
  frame: 'body or optical',
  format: MOUNT_POSE_FORMAT,
};

/** Loads a mount-pose file. Throws InputError listing every issue. */
export function loadBasePoseFile(path: string): MountPose {
  const issues = new IssueCollector();
  const f = readTextFile(path, issues, 'mount pose');
  const src = f ? parseYaml(path, f.text, issues) : undefined;
  let out: MountPose | undefined;
  if (src) {
    const r = mountSchema.safeParse(src.data, { reportInput: true });
    if (!r.success) zodIssuesToInput(src, r.error.issues, HELP, () => [], issues);
    else {
      const d = r.data;
      if ((d.rpy_deg === undefined) === (d.quaternion_wxyz === undefined)) {
        issues.add({ file: path, line: 1, message: 'give exactly one of rpy_deg and quaternion_wxyz', hint: 'e.g. rpy_deg: [0, 0, 0]' });
      } else if (d.quaternion_wxyz) {
        const q = d.quaternion_wxyz;
        const n = Math.hypot(...q);
        if (Math.abs(n - 1) > 1e-6) issues.add(src.issueAt(['quaternion_wxyz'], `quaternion norm is ${n}, expected 1`, 'write a unit quaternion [w, x, y, z]'));
        else out = { T_base_mount: poseFrom(quatToMatrix(q), d.translation), ...(d.frame ? { frame: d.frame } : {}) };
      } else {
        const a = d.rpy_deg!;
        out = { T_base_mount: poseFrom(rpyToMatrix(a[0] * RAD, a[1] * RAD, a[2] * RAD), d.translation), ...(d.frame ? { frame: d.frame } : {}) };
      }
    }
  }
  issues.throwIfAny('mount_pose.invalid');
  return out!;
}
