/**
 * Synthetic sessions from a rig description and a capture plan: the ground
 * truth for tests, demos and benchmarks. Deterministic for a seed.
 *
 * moving_targets: each frame picks one camera, places the target in front of
 * it (a random pixel of its image, a random distance in the plan's range,
 * tilted by up to tiltDeg), and every camera that sees enough of the target
 * from its printed side records detections.
 * fixed_targets: the targets stay where the description puts them (the first
 * at the scene origin); each frame moves the rig to a random pose.
 */
import { cameraModel } from '../camera/registry.js';
import { act, compose, inverse, poseIdentity, type Pose } from '../geometry/se3.js';
import { so3Exp } from '../geometry/so3.js';
import { cross, mat3Mul, norm3 } from '../linalg/small.js';
import { gaussian, rng, uniform } from '../util/random.js';
import type { CapturePlan, RigDescription } from './description.js';

export const DEFAULT_CAPTURE: CapturePlan = Object.freeze({
  frames: 60,
  distanceM: [0.8, 2.5] as [number, number],
  tiltDeg: 35,
  pixelNoisePx: 0.3,
  outlierFraction: 0,
  flippedViews: 0,
  minVisibleFraction: 1,
  maxViewAngleDeg: 70,
  seed: 1,
  pairFraction: 0.7,
  rigMotionM: [1, 1, 0.2] as [number, number, number],
  rigYawDeg: 60,
});

export interface SimulatedDetection {
  frame: string;
  camera: string;
  target: string;
  point: number;
  u: number;
  v: number;
}

export interface SimulatedView {
  frame: string;
  camera: string;
  target: string;
  flipped: boolean;
  /** Detection indices (into detections) that are gross outliers. */
  outliers: number[];
  /** The view's detections are detections[first .. end). */
  first: number;
  end: number;
}

export interface Simulation {
  description: RigDescription;
  plan: CapturePlan;
  detections: SimulatedDetection[];
  views: SimulatedView[];
  /** True T_ref_cam per camera (reference camera = identity). */
  T_ref_cam: Map<string, Pose>;
  /** fixed_targets: true T_origin_target per target (first target = identity). */
  T_origin_target: Map<string, Pose>;
  /** Frames whose target was seen by no camera (dropped). */
  emptyFrames: number;
}

/** Rotation taking the unit vector a to the unit vector b (minimal angle). */
function rotationBetween(a: Float64Array, b: Float64Array): Float64Array {
  const axis = cross(new Float64Array(3), a, b);
  const s = norm3(axis);
  const c = a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!;
  if (s < 1e-12) {
    if (c > 0) return so3Exp([0, 0, 0]);
    // Opposite: rotate π about any axis orthogonal to a.
    const o = Math.abs(a[0]!) < 0.9 ? [1, 0, 0] : [0, 1, 0];
    const ax = cross(new Float64Array(3), a, o);
    const n = norm3(ax);
    return so3Exp([(Math.PI * ax[0]!) / n, (Math.PI * ax[1]!) / n, (Math.PI * ax[2]!) / n]);
  }
  const angle = Math.atan2(s, c);
  return so3Exp([(angle * axis[0]!) / s, (angle * axis[1]!) / s, (angle * axis[2]!) / s]);
}

/** Half the horizontal field of view, radians (angle of the image's left and right edge centres). */
function halfFieldOfView(model: ReturnType<typeof cameraModel>, params: Float64Array, res: [number, number]): number {
  const ray = new Float64Array(3);
  let best = 0;
  for (const x of [0, res[0] - 1]) {
    if (model.unproject(params, [x, 0.5 * (res[1] - 1)], ray)) best = Math.max(best, Math.acos(Math.max(-1, Math.min(1, ray[2]! / norm3(ray)))));
  }
  return best > 0 ? best : Math.PI / 4;
}

/** Optical axis (+z of the camera) in the body frame. */
function opticalAxis(c: { T_body_cam: Pose }): Float64Array {
  const R = c.T_body_cam.R;
  return Float64Array.from([R[2]!, R[5]!, R[8]!]);
}

function axisAngle(a: { T_body_cam: Pose }, b: { T_body_cam: Pose }): number {
  const x = opticalAxis(a);
  const y = opticalAxis(b);
  return Math.acos(Math.max(-1, Math.min(1, x[0]! * y[0]! + x[1]! * y[1]! + x[2]! * y[2]!)));
}

function targetCentroid(target: { spec: { points: Float64Array; numPoints: number } }): Float64Array {
  const c = new Float64Array(3);
  const n = target.spec.numPoints;
  for (let i = 0; i < n; i++) for (let k = 0; k < 3; k++) c[k]! += target.spec.points[3 * i + k]! / n;
  return c;
}

export function simulate(desc: RigDescription, planOverrides: Partial<CapturePlan> = {}): Simulation {
  const plan: CapturePlan = { ...DEFAULT_CAPTURE, ...(desc.capture ?? {}), ...planOverrides };
  const u = rng(plan.seed);
  // Noise and outliers come from their own stream, so that a different noiseSeed keeps the capture geometry.
  const un = rng(plan.noiseSeed ?? (plan.seed ^ 0x5bd1e995));
  const ref = desc.cameras.find((c) => c.spec.name === desc.referenceCamera);
  if (!ref) throw new Error(`reference camera ${desc.referenceCamera} is not among the cameras`);
  const T_ref_body = inverse(ref.T_body_cam);
  const T_ref_cam = new Map<string, Pose>();
  for (const c of desc.cameras) T_ref_cam.set(c.spec.name, compose(T_ref_body, c.T_body_cam));
  const cams = desc.cameras.map((c) => ({
    name: c.spec.name,
    model: cameraModel(c.spec.model),
    params: c.spec.params,
    w: c.spec.resolution[0],
    h: c.spec.resolution[1],
    T_body_cam: c.T_body_cam,
    T_cam_body: inverse(c.T_body_cam),
    halfFov: halfFieldOfView(cameraModel(c.spec.model), c.spec.params, c.spec.resolution),
  }));
  const cosMaxView = Math.cos((plan.maxViewAngleDeg * Math.PI) / 180);
  const detections: SimulatedDetection[] = [];
  const views: SimulatedView[] = [];
  const uv = new Float64Array(2);
  const p = new Float64Array(3);
  let emptyFrames = 0;

  type Cam = (typeof cams)[number];
  type Target = RigDescription['targets'][number];
  type Trial = { camera: string; rows: SimulatedDetection[] }[];

  /** The views one target at T_body_target would give (no noise yet). */
  const observeTrial = (frame: string, target: Target, T_body_target: Pose): Trial => {
    const pts = target.spec.points;
    const n = target.spec.numPoints;
    const centroid = targetCentroid(target);
    const trial: Trial = [];
    for (const cam of cams) {
      const T_cam_target = compose(cam.T_cam_body, T_body_target);
      // Printed side: the camera centre must be on the target's −z side.
      const camInTarget = act(inverse(T_cam_target), [0, 0, 0]);
      if (target.spec.kind === 'checkerboard' && camInTarget[2]! >= 0) continue;
      // Viewing angle at the target centre.
      const centre = act(T_cam_target, centroid);
      const cosView = Math.abs(T_cam_target.R[2]! * centre[0]! + T_cam_target.R[5]! * centre[1]! + T_cam_target.R[8]! * centre[2]!) / norm3(centre);
      if (target.spec.kind === 'checkerboard' && cosView < cosMaxView) continue;
      const rows: SimulatedDetection[] = [];
      for (let i = 0; i < n; i++) {
        act(T_cam_target, pts.subarray(3 * i, 3 * i + 3), p);
        if (!cam.model.project(cam.params, p, uv)) continue;
        if (uv[0]! < 1 || uv[1]! < 1 || uv[0]! > cam.w - 2 || uv[1]! > cam.h - 2) continue;
        rows.push({ frame, camera: cam.name, target: target.spec.name, point: i, u: uv[0]!, v: uv[1]! });
      }
      if (rows.length < Math.max(6, Math.ceil(plan.minVisibleFraction * n))) continue;
      trial.push({ camera: cam.name, rows });
    }
    return trial;
  };

  /** Adds noise and records the views of a trial. */
  const commit = (trial: Trial): void => {
    for (const { rows } of trial) {
      for (const r of rows) {
        r.u += plan.pixelNoisePx * gaussian(un);
        r.v += plan.pixelNoisePx * gaussian(un);
      }
      const first = detections.length;
      for (const r of rows) detections.push(r);
      const r0 = rows[0]!;
      views.push({ frame: r0.frame, camera: r0.camera, target: r0.target, flipped: false, outliers: [], first, end: detections.length });
    }
  };

  /** Target rotation with +z along `dir` (facing back toward the cameras), tilted and turned in plane at random. */
  const facing = (dir: Float64Array): Float64Array => {
    const R_face = rotationBetween(Float64Array.from([0, 0, 1]), dir);
    const tiltMax = (plan.tiltDeg * Math.PI) / 180;
    const tiltAxis = uniform(u, 0, 2 * Math.PI);
    const tilt = tiltMax * Math.sqrt(u());
    const spin = uniform(u, -0.3, 0.3);
    const R_tilt = so3Exp([tilt * Math.cos(tiltAxis), tilt * Math.sin(tiltAxis), 0]);
    return mat3Mul(new Float64Array(9), R_face, mat3Mul(new Float64Array(9), R_tilt, so3Exp([0, 0, spin])));
  };

  /** Pose placing the target's centroid at `centre` with rotation R. */
  const placed = (R: Float64Array, centre: ArrayLike<number>, target: Target): Pose => {
    const Rc = act({ R, t: new Float64Array(3) }, targetCentroid(target));
    return { R, t: Float64Array.from([centre[0]! - Rc[0]!, centre[1]! - Rc[1]!, centre[2]! - Rc[2]!]) };
  };

  /** T_body_target for a target in front of one camera, at a random pixel and distance. */
  const placeInView = (cam: Cam, target: Target): Pose | null => {
    const px = [uniform(u, 0.1, 0.9) * cam.w, uniform(u, 0.1, 0.9) * cam.h];
    const ray = new Float64Array(3);
    if (!cam.model.unproject(cam.params, px, ray)) return null;
    const dist = uniform(u, plan.distanceM[0], plan.distanceM[1]);
    const T_cam_target = placed(facing(ray), [dist * ray[0]!, dist * ray[1]!, dist * ray[2]!], target);
    return compose(cam.T_body_cam, T_cam_target);
  };

  /** T_body_target for a target in the overlap of two cameras: along the mean of their optical axes. */
  const placeBetween = (c: Cam, k: Cam, target: Target): Pose => {
    const ac = opticalAxis(c);
    const ak = opticalAxis(k);
    const w = uniform(u, 0.3, 0.7);
    const dir = Float64Array.from([0, 1, 2].map((i) => w * ac[i]! + (1 - w) * ak[i]! + uniform(u, -0.08, 0.08)));
    const nd = norm3(dir);
    for (let i = 0; i < 3; i++) dir[i]! /= nd;
    const origin = [0, 1, 2].map((i) => 0.5 * (c.T_body_cam.t[i]! + k.T_body_cam.t[i]!));
    const dist = uniform(u, plan.distanceM[0], plan.distanceM[1]);
    return placed(facing(dir), origin.map((o, i) => o + dist * dir[i]!), target);
  };

  const T_origin_target = new Map<string, Pose>();
  if (desc.scene === 'fixed_targets') {
    const first = desc.targets[0]!;
    const T_scene_first = first.T_scene_target ?? poseIdentity();
    for (const t of desc.targets) {
      const T = t.T_scene_target ?? poseIdentity();
      T_origin_target.set(t.spec.name, compose(inverse(T_scene_first), T));
    }
  }

  for (let f = 0; f < plan.frames; f++) {
    const frame = `f${String(f).padStart(5, '0')}`;
    if (desc.scene === 'fixed_targets') {
      // Rig pose in the scene: random position in the box, random yaw.
      const yaw = (uniform(u, -1, 1) * plan.rigYawDeg * Math.PI) / 180;
      const T_scene_body: Pose = {
        R: so3Exp([0, 0, yaw]),
        t: Float64Array.from([
          uniform(u, -0.5, 0.5) * plan.rigMotionM[0],
          uniform(u, -0.5, 0.5) * plan.rigMotionM[1],
          uniform(u, -0.5, 0.5) * plan.rigMotionM[2],
        ]),
      };
      const T_body_scene = inverse(T_scene_body);
      let seen = 0;
      for (const t of desc.targets) {
        const trial = observeTrial(frame, t, compose(T_body_scene, t.T_scene_target ?? poseIdentity()));
        commit(trial);
        seen += trial.length;
      }
      if (seen === 0) emptyFrames++;
      continue;
    }
    const target = desc.targets[Math.floor(u() * desc.targets.length)]!;
    let seen = 0;
    // Most frames aim at the overlap of two cameras (so that the view graph
    // links them); the rest place the target anywhere in one camera's view.
    if (u() < plan.pairFraction && cams.length > 1) {
      const c = cams[Math.floor(u() * cams.length)]!;
      const partners = cams.filter((k) => k !== c && axisAngle(c, k) < 0.9 * (c.halfFov + k.halfFov));
      if (partners.length > 0) {
        const k = partners[Math.floor(u() * partners.length)]!;
        for (let attempt = 0; attempt < 6 && seen < 2; attempt++) {
          const T_body_target = placeBetween(c, k, target);
          const trial = observeTrial(frame, target, T_body_target);
          if (trial.length >= 2 || attempt === 5) {
            commit(trial);
            seen = trial.length;
            break;
          }
        }
        if (seen === 0) emptyFrames++;
        continue;
      }
    }
    const cam = cams[Math.floor(u() * cams.length)]!;
    const T_body_target = placeInView(cam, target);
    if (!T_body_target) {
      emptyFrames++;
      continue;
    }
    const trial = observeTrial(frame, target, T_body_target);
    commit(trial);
    if (trial.length === 0) emptyFrames++;
  }

  // Gross outliers: displaced by 5 to 40 px in a random direction.
  if (plan.outlierFraction > 0) {
    const camByName = new Map(cams.map((c) => [c.name, c]));
    const viewOf = new Int32Array(detections.length);
    views.forEach((v, k) => viewOf.fill(k, v.first, v.end));
    for (let i = 0; i < detections.length; i++) {
      if (un() >= plan.outlierFraction) continue;
      const d = detections[i]!;
      const cam = camByName.get(d.camera)!;
      const a = uniform(un, 0, 2 * Math.PI);
      const r = uniform(un, 5, 40);
      d.u = Math.min(cam.w - 1, Math.max(0, d.u + r * Math.cos(a)));
      d.v = Math.min(cam.h - 1, Math.max(0, d.v + r * Math.sin(a)));
      views[viewOf[i]!]!.outliers.push(i);
    }
  }
  // 180° flips: point id i → N − 1 − i, on fully visible checkerboard views of frames seen by 3+ cameras when possible.
  if (plan.flippedViews > 0) {
    const perFrame = new Map<string, number>();
    for (const v of views) perFrame.set(v.frame + '/' + v.target, (perFrame.get(v.frame + '/' + v.target) ?? 0) + 1);
    const tgt = new Map(desc.targets.map((t) => [t.spec.name, t.spec]));
    const candidates = views.filter((v) => {
      const spec = tgt.get(v.target)!;
      return spec.kind === 'checkerboard' && v.end - v.first === spec.numPoints && (perFrame.get(v.frame + '/' + v.target) ?? 0) >= 3;
    });
    const pool = candidates.length >= plan.flippedViews ? candidates : views.filter((v) => tgt.get(v.target)!.kind === 'checkerboard');
    for (let k = 0; k < plan.flippedViews && pool.length > 0; k++) {
      const idx = Math.floor(u() * pool.length);
      const v = pool.splice(idx, 1)[0]!;
      const n = tgt.get(v.target)!.numPoints;
      for (let i = v.first; i < v.end; i++) detections[i]!.point = n - 1 - detections[i]!.point;
      v.flipped = true;
    }
  }
  return { description: desc, plan, detections, views, T_ref_cam, T_origin_target, emptyFrames };
}
