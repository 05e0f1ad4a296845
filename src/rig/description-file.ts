/**
 * Loader for rig descriptions (`format: rig-description/1`, see
 * description.ts and the README). Camera and target entries use the same
 * fields and checks as the session file, plus mounting and prior fields.
 */
import { z } from 'zod';
import { inverse, type Pose } from '../geometry/se3.js';
import { rpyToMatrix } from '../geometry/rotation.js';
import { mat3Mul } from '../linalg/small.js';
import { IssueCollector, describeValue } from '../io/issues.js';
import { cameraSchema, targetSchema, sessionKnownKeys } from '../io/session-schema.js';
import { buildTarget, checkCamera, checkDuplicates } from '../io/session.js';
import { parseYaml, readTextFile, zodIssuesToInput } from '../io/yaml-source.js';
import type { CameraSpec } from '../io/types.js';
import { R_FWD_OPT, type CapturePlan, type DescribedCamera, type DescribedTarget, type RigDescription } from './description.js';

export const DESCRIPTION_FORMAT = 'rig-description/1';
const DEG = Math.PI / 180;

const vec3 = z.tuple([z.number(), z.number(), z.number()]);
const describedCameraSchema = cameraSchema.extend({
  position: vec3.meta({ description: 'Camera centre in the body frame, metres.' }),
  mount_rpy_deg: vec3.meta({ description: "URDF roll-pitch-yaw (degrees) of the camera's forward-looking frame in the body frame." }),
  sigma_position_mm: z.number().positive().optional(),
  sigma_rotation_deg: z.number().positive().optional(),
});
const posePlacement = z.strictObject({ position: vec3, rpy_deg: vec3 });
const range = z.tuple([z.number().nonnegative(), z.number().nonnegative()]);
const captureSchema = z.strictObject({
  frames: z.int().positive().optional(),
  distance_m: range.optional(),
  tilt_deg: z.number().min(0).max(85).optional(),
  pixel_noise_px: z.number().min(0).optional(),
  outlier_fraction: z.number().min(0).max(0.5).optional(),
  flipped_views: z.int().min(0).optional(),
  min_visible_fraction: z.number().gt(0).max(1).optional(),
  max_view_angle_deg: z.number().gt(0).max(89).optional(),
  seed: z.int().optional(),
  rig_motion_m: vec3.optional(),
  rig_yaw_deg: z.number().min(0).optional(),
});
const descriptionSchema = z.strictObject({
  format: z.literal(DESCRIPTION_FORMAT),
  name: z.string(),
  reference_camera: z.string(),
  body_frame: z.string().optional(),
  scene: z.enum(['moving_targets', 'fixed_targets']).optional(),
  cameras: z.array(describedCameraSchema).min(1),
  targets: z.array(z.union([targetSchema, z.looseObject({ pose_in_scene: posePlacement })])).min(1),
  capture: captureSchema.optional(),
});

function poseFromPlacement(position: number[], rpyDeg: number[], R_extra?: Float64Array): Pose {
  const R = rpyToMatrix(rpyDeg[0]! * DEG, rpyDeg[1]! * DEG, rpyDeg[2]! * DEG);
  return { R: R_extra ? mat3Mul(new Float64Array(9), R, R_extra) : R, t: Float64Array.from(position) };
}

/** T_body_cam of an optical frame mounted with a forward-looking rpy at a position. */
export function mountPose(position: number[], mountRpyDeg: number[]): Pose {
  return poseFromPlacement(position, mountRpyDeg, R_FWD_OPT);
}

/** Loads and validates a rig description; throws InputError listing every issue. */
export function loadRigDescription(path: string): RigDescription {
  const issues = new IssueCollector();
  const out = loadRigDescriptionCollect(path, issues);
  issues.throwIfAny('description.invalid');
  return out!;
}

export function loadRigDescriptionCollect(path: string, issues: IssueCollector): RigDescription | undefined {
  const f = readTextFile(path, issues, 'rig description');
  if (!f) return undefined;
  const src = parseYaml(path, f.text, issues);
  if (!src) return undefined;
  const data = src.data as Record<string, unknown> | null;
  if (data === null || typeof data !== 'object' || data.format !== DESCRIPTION_FORMAT) {
    issues.add(
      src.issueAt(
        ['format'],
        `expected a rig description ("format: ${DESCRIPTION_FORMAT}"), found format ${describeValue(data?.format)}`,
        'pass a rig description such as rigs/stereo-bench.yaml',
      ),
    );
    return undefined;
  }
  const parsed = descriptionSchema.safeParse(data, { reportInput: true });
  if (!parsed.success) {
    zodIssuesToInput(src, parsed.error.issues, {}, sessionKnownKeys, issues);
    return undefined;
  }
  const d = parsed.data;
  const before = issues.total;
  const cameras: DescribedCamera[] = [];
  d.cameras.forEach((c, i) => {
    const { position, mount_rpy_deg, sigma_position_mm, sigma_rotation_deg, ...camInput } = c;
    const spec = checkCamera(src, i, camInput, issues) as CameraSpec | undefined;
    if (!spec) return;
    cameras.push({
      spec,
      T_body_cam: mountPose(position, mount_rpy_deg),
      ...(sigma_position_mm !== undefined ? { sigmaPositionM: sigma_position_mm / 1000 } : {}),
      ...(sigma_rotation_deg !== undefined ? { sigmaRotationRad: sigma_rotation_deg * DEG } : {}),
    });
  });
  checkDuplicates(src, 'cameras', d.cameras.map((c) => c.name), issues);
  const targets: DescribedTarget[] = [];
  d.targets.forEach((t, i) => {
    const { pose_in_scene, ...rest } = t as Record<string, unknown> & { pose_in_scene?: { position: number[]; rpy_deg: number[] } };
    const r = targetSchema.safeParse(rest);
    if (!r.success) {
      zodIssuesToInput(src, r.error.issues.map((zi) => ({ ...zi, path: ['targets', i, ...zi.path] })), {}, sessionKnownKeys, issues);
      return;
    }
    targets.push({
      spec: buildTarget(r.data),
      ...(pose_in_scene ? { T_scene_target: poseFromPlacement(pose_in_scene.position, pose_in_scene.rpy_deg) } : {}),
    });
  });
  checkDuplicates(src, 'targets', targets.map((t) => t.spec.name), issues);
  if (!d.cameras.some((c) => c.name === d.reference_camera)) {
    issues.add(src.issueAt(['reference_camera'], `reference camera "${d.reference_camera}" is not among the cameras`, 'name one of the cameras listed'));
  }
  const scene = d.scene ?? 'moving_targets';
  if (scene === 'fixed_targets') {
    targets.forEach((t, i) => {
      if (!t.T_scene_target) {
        issues.add(src.issueAt(['targets', i], `target "${t.spec.name}" has no pose_in_scene`, 'fixed_targets descriptions place every target: add pose_in_scene: {position: [x, y, z], rpy_deg: [r, p, y]}'));
      }
    });
  }
  if (issues.total > before) return undefined;
  let capture: CapturePlan | undefined;
  if (d.capture) {
    const c = d.capture;
    capture = {
      ...(c.frames !== undefined ? { frames: c.frames } : {}),
      ...(c.distance_m ? { distanceM: c.distance_m } : {}),
      ...(c.tilt_deg !== undefined ? { tiltDeg: c.tilt_deg } : {}),
      ...(c.pixel_noise_px !== undefined ? { pixelNoisePx: c.pixel_noise_px } : {}),
      ...(c.outlier_fraction !== undefined ? { outlierFraction: c.outlier_fraction } : {}),
      ...(c.flipped_views !== undefined ? { flippedViews: c.flipped_views } : {}),
      ...(c.min_visible_fraction !== undefined ? { minVisibleFraction: c.min_visible_fraction } : {}),
      ...(c.max_view_angle_deg !== undefined ? { maxViewAngleDeg: c.max_view_angle_deg } : {}),
      ...(c.seed !== undefined ? { seed: c.seed } : {}),
      ...(c.rig_motion_m ? { rigMotionM: c.rig_motion_m } : {}),
      ...(c.rig_yaw_deg !== undefined ? { rigYawDeg: c.rig_yaw_deg } : {}),
    } as CapturePlan;
  }
  return {
    format: DESCRIPTION_FORMAT,
    name: d.name,
    path,
    referenceCamera: d.reference_camera,
    bodyFrame: d.body_frame ?? 'base_link',
    cameras,
    targets,
    scene,
    ...(capture ? { capture } : {}),
  };
}

/** T_ref_body: the body frame seen from the reference camera. */
export function referenceFromBody(desc: RigDescription): Pose {
  const ref = desc.cameras.find((c) => c.spec.name === desc.referenceCamera)!;
  return inverse(ref.T_body_cam);
}

