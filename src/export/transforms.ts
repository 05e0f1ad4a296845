/**
 * The rig's transform tree for export: a flat list of parent → child fixed
 * transforms T_parent_child (formats.md notation: p_parent = R p_child + t).
 *
 * Frames:
 *  - `<camera>_optical`: each camera's optical frame (z out of the lens, x
 *    right, y down). The root camera's optical frame is the tree's root, or
 *    the child of the base frame when one is given.
 *  - `<camera>_body` (optional): same origin, body convention (x forward =
 *    optical z, y left = −optical x, z up = −optical y), child of the optical
 *    frame: T_optical_body = (R_fwd_opt)ᵀ with R_fwd_opt from description.ts.
 *  - base frame (optional): T_base_rootOptical = T_base_mount · T_mount_optical,
 *    where the mount pose is that of the root camera's body-convention frame
 *    (default; the convention of rig descriptions' mount_rpy_deg) or of its
 *    optical frame, as the caller says.
 *
 * Names are sanitised to [A-Za-z0-9_] (other characters become "_", a leading
 * digit gets a "_" prefix); two frames that would share a name are an error.
 */
import { compose, poseFrom, poseIdentity, type Pose } from '../geometry/se3.js';
import { matrixToQuat, matrixToRpy, poseToMatrix4 } from '../geometry/rotation.js';
import { mat3Transpose } from '../linalg/small.js';
import { OptionsError } from '../errors.js';
import type { RigFile } from '../io/types.js';
import { R_FWD_OPT } from '../rig/description.js';
import { rigCameraPose } from '../rig/compare.js';

export interface FixedTransform {
  parent: string;
  child: string;
  /** Camera the child frame belongs to (null for none). */
  camera: string | null;
  kind: 'optical' | 'body';
  T_parent_child: Pose;
}

export interface BaseMount {
  /** Name of the robot base frame. */
  frame: string;
  /** Pose of the root camera's mount frame in the base frame. */
  T_base_mount: Pose;
  /** Which frame of the root camera T_base_mount places: its body-convention frame (default) or its optical frame. */
  mountFrame: 'body' | 'optical';
}

export interface TransformTree {
  name: string;
  /** Root frame of the tree (the base frame, or the root camera's optical frame). */
  root: string;
  transforms: FixedTransform[];
}

/** T_optical_body: rotation only, (R_fwd_opt)ᵀ. */
export function T_optical_body(): Pose {
  return poseFrom(mat3Transpose(new Float64Array(9), R_FWD_OPT), [0, 0, 0]);
}

/** Frame name made of [A-Za-z0-9_], not starting with a digit. */
export function sanitiseFrameName(name: string): string {
  let s = name.replace(/[^A-Za-z0-9_]/g, '_');
  if (s === '' || /^[0-9]/.test(s)) s = `_${s}`;
  return s;
}

export function buildTransformTree(rig: RigFile, opts: { base?: BaseMount; bodyFrames?: boolean } = {}): TransformTree {
  const used = new Map<string, string>();
  const claim = (frame: string, what: string): string => {
    const s = sanitiseFrameName(frame);
    const prior = used.get(s);
    if (prior !== undefined) {
      throw new OptionsError('export.name_clash', `frame name "${s}" (from ${what}) is already taken by ${prior}; rename one of them`);
    }
    used.set(s, what);
    return s;
  };
  const transforms: FixedTransform[] = [];
  const baseName = opts.base ? claim(opts.base.frame, `the base frame "${opts.base.frame}"`) : undefined;
  const rootOptical = claim(`${rig.root}_optical`, `camera "${rig.root}"`);
  if (opts.base && baseName) {
    const T_mount_optical = opts.base.mountFrame === 'body' ? poseFrom(R_FWD_OPT, [0, 0, 0]) : poseIdentity();
    transforms.push({ parent: baseName, child: rootOptical, camera: rig.root, kind: 'optical', T_parent_child: compose(opts.base.T_base_mount, T_mount_optical) });
  }
  const opticalOf = new Map<string, string>([[rig.root, rootOptical]]);
  for (const c of rig.cameras) {
    if (c.name === rig.root) continue;
    const child = claim(`${c.name}_optical`, `camera "${c.name}"`);
    opticalOf.set(c.name, child);
    transforms.push({ parent: rootOptical, child, camera: c.name, kind: 'optical', T_parent_child: rigCameraPose(c) });
  }
  if (opts.bodyFrames) {
    for (const c of rig.cameras) {
      const child = claim(`${c.name}_body`, `camera "${c.name}" (body frame)`);
      transforms.push({ parent: opticalOf.get(c.name)!, child, camera: c.name, kind: 'body', T_parent_child: T_optical_body() });
    }
  }
  return { name: rig.name, root: baseName ?? rootOptical, transforms };
}

/** T_root_frame for every frame of the tree, by composing along parents (index cancellation). */
export function composeTree(tree: { root: string; transforms: { parent: string; child: string; T_parent_child: Pose }[] }): Map<string, Pose> {
  const out = new Map<string, Pose>([[tree.root, poseIdentity()]]);
  let progress = true;
  while (progress) {
    progress = false;
    for (const tr of tree.transforms) {
      if (out.has(tr.child)) continue;
      const T_root_parent = out.get(tr.parent);
      if (!T_root_parent) continue;
      out.set(tr.child, compose(T_root_parent, tr.T_parent_child));
      progress = true;
    }
  }
  return out;
}

/** Flat JSON/YAML form: parent, child, translation, quaternion_wxyz, rpy_deg and the 4x4 matrix (row by row). */
export function transformTreeObject(tree: TransformTree, caution: string, source: string): Record<string, unknown> {
  const DEG = 180 / Math.PI;
  return {
    format: 'rig-transforms/1',
    name: tree.name,
    source,
    root: tree.root,
    caution,
    transforms: tree.transforms.map((tr) => {
      const T = tr.T_parent_child;
      const q = matrixToQuat(T.R);
      const rpy = matrixToRpy(T.R);
      const M = poseToMatrix4(T);
      return {
        parent: tr.parent,
        child: tr.child,
        camera: tr.camera,
        kind: tr.kind,
        translation: [T.t[0]!, T.t[1]!, T.t[2]!],
        quaternion_wxyz: [q[0]!, q[1]!, q[2]!, q[3]!],
        rpy_deg: [rpy[0]! * DEG, rpy[1]! * DEG, rpy[2]! * DEG],
        matrix: [0, 1, 2, 3].map((r) => [M[4 * r]!, M[4 * r + 1]!, M[4 * r + 2]!, M[4 * r + 3]!]),
      };
    }),
  };
}
