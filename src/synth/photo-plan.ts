/**
 * Board placements for an example photo set of a rig (moving_targets): most
 * frames put the board in the overlap of two neighbouring cameras so that
 * both see all of it (co-visible frames link the cameras), the others in
 * front of one camera. Every accepted placement keeps the whole checkered
 * area in view, printed side toward the camera, with squares of at least
 * `minSquarePx`, in the cameras it is planned for. Deterministic for a seed.
 */
import { compose, inverse, type Pose } from '../geometry/se3.js';
import { so3Exp } from '../geometry/so3.js';
import { cross, mat3Mul, norm3 } from '../linalg/small.js';
import { rng, uniform } from '../util/random.js';
import type { RigDescription } from '../rig/description.js';
import { boardInView } from './board-poses.js';
import type { RenderBoard, RenderCamera } from './render-board.js';

export interface PhotoPlanOptions {
  frames: number;
  /** Board distance from the cameras, metres [min, max]. */
  distanceM: [number, number];
  /** Largest tilt of the board away from facing the cameras, degrees. */
  tiltDeg: number;
  seed: number;
  /** Fraction of frames aimed at the overlap of two cameras (default 0.75). */
  pairFraction?: number;
  /** Smallest square side in px in the cameras a frame is planned for (default 20). */
  minSquarePx?: number;
}

export interface PlannedFrame {
  frame: string;
  /** Board pose in the reference camera's frame. */
  T_ref_board: Pose;
  /** Cameras that see the whole board. */
  fullyVisibleIn: string[];
}

export interface PlannedCamera {
  name: string;
  camera: RenderCamera;
  /** Pose of the camera in the reference camera's frame. */
  T_ref_cam: Pose;
}

/** Render cameras (Brown–Conrady or pinhole) and their poses relative to the reference camera. */
export function plannedCameras(desc: RigDescription): PlannedCamera[] {
  const ref = desc.cameras.find((c) => c.spec.name === desc.referenceCamera);
  if (!ref) throw new Error(`reference camera ${desc.referenceCamera} is not among the cameras`);
  const T_ref_body = inverse(ref.T_body_cam);
  return desc.cameras.map((c) => {
    const s = c.spec;
    if (s.model !== 'brown-conrady' && s.model !== 'pinhole') throw new Error(`camera ${s.name}: the renderer supports brown-conrady and pinhole, not ${s.model}`);
    const p = s.params;
    return {
      name: s.name,
      camera: { width: s.resolution[0], height: s.resolution[1], fx: p[0]!, fy: p[1]!, cx: p[2]!, cy: p[3]!, distortion: Array.from(p.subarray(4)) },
      T_ref_cam: compose(T_ref_body, c.T_body_cam),
    };
  });
}

function axis(T: Pose): Float64Array {
  return Float64Array.from([T.R[2]!, T.R[5]!, T.R[8]!]);
}

/** Rotation taking unit vector a to unit vector b (a and b not opposite). */
function rotationBetween(a: Float64Array, b: Float64Array): Float64Array {
  const ax = cross(new Float64Array(3), a, b);
  const s = norm3(ax);
  const c = a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!;
  if (s < 1e-12) return so3Exp([0, 0, 0]);
  const ang = Math.atan2(s, c);
  return so3Exp([(ang * ax[0]!) / s, (ang * ax[1]!) / s, (ang * ax[2]!) / s]);
}

/** Plans `opts.frames` board placements (throws when a frame cannot be placed in 500 draws). */
export function planBoardPoses(cams: readonly PlannedCamera[], board: RenderBoard, opts: PhotoPlanOptions): PlannedFrame[] {
  const u = rng(opts.seed);
  const minSq = opts.minSquarePx ?? 20;
  const pairFraction = opts.pairFraction ?? 0.75;
  // Neighbouring pairs: optical axes closer than 60°.
  const pairs: [number, number][] = [];
  for (let i = 0; i < cams.length; i++) {
    for (let j = i + 1; j < cams.length; j++) {
      const a = axis(cams[i]!.T_ref_cam), b = axis(cams[j]!.T_ref_cam);
      if (Math.acos(Math.min(1, a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!)) < (60 * Math.PI) / 180) pairs.push([i, j]);
    }
  }
  const bc = [((board.columns - 1) * board.squareM) / 2, ((board.rows - 1) * board.squareM) / 2];
  const out: PlannedFrame[] = [];
  for (let f = 0; f < opts.frames; f++) {
    const wantPair = pairs.length > 0 && (f % 4 !== 3 || pairFraction >= 1) && pairFraction > 0;
    const pair = pairs[f % Math.max(1, pairs.length)];
    const single = f % cams.length;
    let placed: PlannedFrame | undefined;
    for (let attempt = 0; attempt < 500 && !placed; attempt++) {
      const members = wantPair && pair ? pair : [single];
      const dir = new Float64Array(3);
      const origin = new Float64Array(3);
      const w = members.length === 2 ? uniform(u, 0.35, 0.65) : 1;
      members.forEach((ci, k) => {
        const a = axis(cams[ci]!.T_ref_cam);
        const wk = k === 0 ? w : 1 - w;
        for (let i = 0; i < 3; i++) {
          dir[i]! += wk * a[i]! + uniform(u, -0.12, 0.12) / members.length;
          origin[i]! += wk * cams[ci]!.T_ref_cam.t[i]!;
        }
      });
      const nd = norm3(dir);
      for (let i = 0; i < 3; i++) dir[i]! /= nd;
      const dist = uniform(u, opts.distanceM[0], opts.distanceM[1]);
      // Board +z along the viewing direction: the cameras see its printed side.
      const R_face = rotationBetween(Float64Array.from([0, 0, 1]), dir);
      const tiltMax = (opts.tiltDeg * Math.PI) / 180;
      const tiltAxis = uniform(u, 0, 2 * Math.PI);
      const tilt = tiltMax * Math.sqrt(u());
      const R_tilt = so3Exp([tilt * Math.cos(tiltAxis), tilt * Math.sin(tiltAxis), uniform(u, -0.25, 0.25)]);
      const R = mat3Mul(new Float64Array(9), R_face, R_tilt);
      const centre = [0, 1, 2].map((i) => origin[i]! + dist * dir[i]!);
      const t = Float64Array.from([0, 1, 2].map((i) => centre[i]! - (R[3 * i]! * bc[0]! + R[3 * i + 1]! * bc[1]!)));
      const T_ref_board = { R, t };
      const visible = cams.filter((c) => boardInView(c.camera, board, compose(inverse(c.T_ref_cam), T_ref_board), { marginPx: 3, minSquarePx: minSq }));
      if (members.every((ci) => visible.includes(cams[ci]!))) {
        placed = { frame: String(f + 1).padStart(3, '0'), T_ref_board, fullyVisibleIn: visible.map((c) => c.name) };
      }
    }
    if (!placed) throw new Error(`planBoardPoses: frame ${f + 1} could not be placed in 500 draws; widen distanceM or lower minSquarePx`);
    out.push(placed);
  }
  return out;
}
