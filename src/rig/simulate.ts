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

export function simulate(desc: RigDescription, planOverrides: Partial<CapturePlan> = {}): Simulation {
  const plan: CapturePlan = { ...DEFAULT_CAPTURE, ...(desc.capture ?? {}), ...planOverrides };
  const u = rng(plan.seed);
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
  }));
  const cosMaxView = Math.cos((plan.maxViewAngleDeg * Math.PI) / 180);
  const detections: SimulatedDetection[] = [];
  const views: SimulatedView[] = [];
  const uv = new Float64Array(2);
  const p = new Float64Array(3);
  let emptyFrames = 0;

  /** Records the views of one target at pose T_body_target (body frame of this frame's rig pose). */
  const observe = (frame: string, target: RigDescription['targets'][number], T_body_target: Pose): number => {
    const pts = target.spec.points;
    const n = target.spec.numPoints;
    let seen = 0;
    for (const cam of cams) {
      const T_cam_target = compose(cam.T_cam_body, T_body_target);
      // Printed side: the camera centre must be on the target's −z side.
      const camInTarget = act(inverse(T_cam_target), [0, 0, 0]);
      if (target.spec.kind === 'checkerboard' && camInTarget[2]! >= 0) continue;
      // Viewing angle at the target centre.
      let cx = 0, cy = 0, cz = 0;
      for (let i = 0; i < n; i++) {
        cx += pts[3 * i]!;
        cy += pts[3 * i + 1]!;
        cz += pts[3 * i + 2]!;
      }
      const centre = act(T_cam_target, [cx / n, cy / n, cz / n]);
      const nz = [T_cam_target.R[2]!, T_cam_target.R[5]!, T_cam_target.R[8]!];
      const cosView = Math.abs(nz[0]! * centre[0]! + nz[1]! * centre[1]! + nz[2]! * centre[2]!) / norm3(centre);
      if (target.spec.kind === 'checkerboard' && cosView < cosMaxView) continue;
      const rows: SimulatedDetection[] = [];
      for (let i = 0; i < n; i++) {
        act(T_cam_target, pts.subarray(3 * i, 3 * i + 3), p);
        if (!cam.model.project(cam.params, p, uv)) continue;
        if (uv[0]! < 1 || uv[1]! < 1 || uv[0]! > cam.w - 2 || uv[1]! > cam.h - 2) continue;
        rows.push({ frame, camera: cam.name, target: target.spec.name, point: i, u: uv[0]!, v: uv[1]! });
      }
      if (rows.length < Math.max(6, Math.ceil(plan.minVisibleFraction * n))) continue;
      for (const r of rows) {
        r.u += plan.pixelNoisePx * gaussian(u);
        r.v += plan.pixelNoisePx * gaussian(u);
      }
      const first = detections.length;
      for (const r of rows) detections.push(r);
      views.push({ frame, camera: cam.name, target: target.spec.name, flipped: false, outliers: [], first, end: detections.length });
      seen++;
    }
    return seen;
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
      for (const t of desc.targets) seen += observe(frame, t, compose(T_body_scene, t.T_scene_target ?? poseIdentity()));
      if (seen === 0) emptyFrames++;
      continue;
    }
    const target = desc.targets[Math.floor(u() * desc.targets.length)]!;
    const cam = cams[Math.floor(u() * cams.length)]!;
    // A random pixel (kept away from the border), a random distance along its ray.
    const px = [uniform(u, 0.15, 0.85) * cam.w, uniform(u, 0.15, 0.85) * cam.h];
    const ray = new Float64Array(3);
    if (!cam.model.unproject(cam.params, px, ray)) {
      emptyFrames++;
      continue;
    }
    const dist = uniform(u, plan.distanceM[0], plan.distanceM[1]);
    // Facing the camera (target +z along the ray), then tilted and turned in plane.
    const R_face = rotationBetween(Float64Array.from([0, 0, 1]), ray);
    const tiltMax = (plan.tiltDeg * Math.PI) / 180;
    const tiltAxis = uniform(u, 0, 2 * Math.PI);
    const tilt = tiltMax * Math.sqrt(u());
    const spin = uniform(u, -0.3, 0.3);
    const R_tilt = so3Exp([tilt * Math.cos(tiltAxis), tilt * Math.sin(tiltAxis), 0]);
    const R = mat3Mul(new Float64Array(9), R_face, mat3Mul(new Float64Array(9), R_tilt, so3Exp([0, 0, spin])));
    const pts = target.spec.points;
    const n = target.spec.numPoints;
    const c = [0, 0, 0];
    for (let i = 0; i < n; i++) for (let k = 0; k < 3; k++) c[k]! += pts[3 * i + k]! / n;
    const Rc = act({ R, t: new Float64Array(3) }, c);
    const T_cam_target: Pose = {
      R,
      t: Float64Array.from([dist * ray[0]! - Rc[0]!, dist * ray[1]! - Rc[1]!, dist * ray[2]! - Rc[2]!]),
    };
    const seen = observe(frame, target, compose(cam.T_body_cam, T_cam_target));
    if (seen === 0) emptyFrames++;
  }

  // Gross outliers: displaced by 5 to 40 px in a random direction.
  if (plan.outlierFraction > 0) {
    const camByName = new Map(cams.map((c) => [c.name, c]));
    const viewOf = new Int32Array(detections.length);
    views.forEach((v, k) => viewOf.fill(k, v.first, v.end));
    for (let i = 0; i < detections.length; i++) {
      if (u() >= plan.outlierFraction) continue;
      const d = detections[i]!;
      const cam = camByName.get(d.camera)!;
      const a = uniform(u, 0, 2 * Math.PI);
      const r = uniform(u, 5, 40);
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
