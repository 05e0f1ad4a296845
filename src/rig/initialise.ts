/**
 * Initialisation over the view graph.
 *
 * 1. PnP per view with the camera's current intrinsics; the fit is trimmed
 *    once (points beyond max(5 × median residual, 2 px) are dropped and PnP
 *    re-run) so that a few gross detections do not spoil the pose. Views with
 *    fewer than MIN_VIEW_POINTS points, failed PnP, fewer than half their
 *    points kept, or an inlier RMS above max(5 × the median view RMS, 3 px)
 *    are set aside.
 * 2. Relative poses T_ci_cj = T_ci_target · T_cj_target⁻¹ from every frame in
 *    which two cameras see the same target, averaged robustly per camera pair.
 *    Edge support = number of agreeing frames.
 * 3. A maximum spanning tree from the reference camera over the support
 *    (Prim), so that every camera is reached along its best-supported path;
 *    cameras that never share a frame with the reference are chained through
 *    others. Disconnected groups are a RigSolveError naming the groups.
 * 4. Frame (or target) poses from the views, with whole views that contradict
 *    the other cameras of their frame set aside (180° flips, bad detections).
 */
import type { CameraModel } from '../camera/model.js';
import { compose, inverse, type Pose } from '../geometry/se3.js';
import { so3Angle } from '../geometry/so3.js';
import { mat3Mul, mat3Transpose } from '../linalg/small.js';
import type { Session } from '../io/types.js';
import { PnpError, solvePnP, type PnpResult } from '../pnp/index.js';
import { huberLoss } from '../solver/loss.js';
import { averagePosesRobust } from './average.js';
import { viewData, type View } from './views.js';

export const MIN_VIEW_POINTS = 6;

/** Huber scale of the initial PnP refinement in units of the camera's pixel sigma (3σ: common practice for a robust threshold). */
const INIT_PNP_HUBER_SIGMAS = 3;

/**
 * PnP settings for initialisation: a planar fit within 2 px is taken without
 * also trying EPnP, refinement uses a Huber loss at 3 pixel sigmas (a few
 * gross corners cannot pull the pose, so the trimming below sees them) and
 * stops at a relative cost decrease of 1e-8 (the joint solve refines
 * everything afterwards).
 */
function initPnpOptions(pixelSigma: number) {
  return {
    acceptPlanarRmsPx: 2,
    refine: { functionTolerance: 1e-8, stepTolerance: 1e-10, maxIterations: 30, loss: huberLoss(INIT_PNP_HUBER_SIGMAS * pixelSigma) },
  };
}

export interface PnpOutcome {
  used: number;
  setAside: number;
  medianRmsPx: number;
}

function median(values: ArrayLike<number>): number {
  if (values.length === 0) return NaN;
  // Typed-array sort: numeric order without a comparator callback.
  const s = Float64Array.from(values).sort();
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!);
}

/** Rotation angle between two rotations, radians. */
export function rotationAngle(R1: ArrayLike<number>, R2: ArrayLike<number>): number {
  return so3Angle(mat3Mul(new Float64Array(9), mat3Transpose(new Float64Array(9), R1), R2));
}

/**
 * Step 1: PnP per view. `models[c]` and `params[c]` are the cameras' current
 * intrinsics. `onProgress(done, total)` is called about every 1 % of the views.
 */
export function initialiseViewPoses(
  session: Session,
  views: View[],
  models: CameraModel[],
  params: Float64Array[],
  onProgress?: (done: number, total: number) => void,
): PnpOutcome {
  const rmsList: number[] = [];
  const progressStep = Math.max(1, Math.ceil(views.length / 100));
  let visited = 0;
  for (const view of views) {
    if (onProgress && visited % progressStep === 0) onProgress(visited, views.length);
    visited++;
    if (view.status !== 'used') continue;
    if (fitViewPose(session, view, models[view.camera]!, params[view.camera]!)) rmsList.push(view.pnpRmsPx!);
  }
  const med = median(rmsList);
  const limit = pnpOutlierLimit(med);
  let used = 0;
  let setAside = 0;
  for (const view of views) {
    if (view.status === 'used' && view.pnpRmsPx! > limit) {
      view.status = 'pnp_outlier';
      view.reason = `PnP RMS ${view.pnpRmsPx!.toFixed(2)} px is far above the median ${med.toFixed(2)} px`;
    }
    if (view.status === 'used') used++;
    else setAside++;
  }
  return { used, setAside, medianRmsPx: med };
}

/** Limit on a view's (trimmed) PnP RMS, px, given the median over all views: max(5 × median, 3 px). */
export function pnpOutlierLimit(medianRmsPx: number): number {
  return Math.max(5 * medianRmsPx, 3);
}

/**
 * PnP for one view with the camera's current intrinsics, trimmed once (see the
 * module comment). On success sets view.T_cam_target and view.pnpRmsPx and
 * returns true; otherwise sets view.status and view.reason and returns false.
 */
export function fitViewPose(session: Session, view: View, model: CameraModel, intr: Float64Array): boolean {
  const camName = session.cameras[view.camera]!.name;
  const pnpOptions = initPnpOptions(session.cameras[view.camera]!.pixelSigma);
  if (view.rows.length < MIN_VIEW_POINTS) {
    view.status = 'too_few_points';
    view.reason = `${view.rows.length} points (at least ${MIN_VIEW_POINTS} needed)`;
    return false;
  }
  // Pixels the camera model cannot unproject (beyond the lens model's valid
  // region: usually gross detections) are dropped from the view. PnP
  // unprojects every pixel itself, so the filter runs only after it reports one.
  const dropUnprojectable = (): boolean => {
    const d = session.detections;
    const ray = new Float64Array(3);
    const uv = new Float64Array(2);
    const valid = Array.from(view.rows).filter((r) => {
      uv[0] = d.u[r]!;
      uv[1] = d.v[r]!;
      return model.unproject(intr, uv, ray);
    });
    if (valid.length === view.rows.length) return true;
    if (valid.length < MIN_VIEW_POINTS) {
      view.status = 'pnp_failed';
      view.reason = `${view.rows.length - valid.length} of ${view.rows.length} pixels lie outside the valid region of the ${model.name} model of camera ${camName}`;
      return false;
    }
    view.rows = Int32Array.from(valid);
    return true;
  };
  try {
    let fit: PnpResult;
    try {
      const { points, pixels } = viewData(session, view);
      fit = solvePnP(model, intr, points, pixels, pnpOptions);
    } catch (e) {
      if (!(e instanceof PnpError && e.code === 'pnp.unprojectable')) throw e;
      if (!dropUnprojectable()) return false;
      const { points, pixels } = viewData(session, view);
      fit = solvePnP(model, intr, points, pixels, pnpOptions);
    }
    // residualsPx: per-point error norm, px.
    const norms = fit.residualsPx;
    const thr = Math.max(5 * median(norms), 2);
    const keep: number[] = [];
    for (let k = 0; k < norms.length; k++) if (norms[k]! <= thr) keep.push(view.rows[k]!);
    if (keep.length < Math.max(MIN_VIEW_POINTS, Math.ceil(0.5 * view.rows.length))) {
      view.status = 'too_many_outliers';
      view.reason = `only ${keep.length} of ${view.rows.length} points agree with the PnP pose`;
      return false;
    }
    if (keep.length < view.rows.length) {
      const sub = viewData(session, view, keep);
      fit = solvePnP(model, intr, sub.points, sub.pixels, pnpOptions);
    }
    view.T_cam_target = fit.T_cam_target;
    view.pnpRmsPx = fit.rmsPx;
    return true;
  } catch (e) {
    view.status = 'pnp_failed';
    view.reason = `PnP failed for camera ${camName}: ${(e as Error).message}`;
    return false;
  }
}

export interface GraphEdge {
  a: number;
  b: number;
  /** T_a_b averaged over the agreeing frames. */
  T_a_b: Pose;
  /** Number of frames agreeing with the average. */
  support: number;
  /** Number of frames in total. */
  samples: number;
}

/** Key of a (frame, target) pair, for grouping views captured together. */
export function frameTargetKey(view: View, numTargets: number): number {
  return view.frame * numTargets + view.target;
}

/** Groups used views by (frame, target). */
export function groupByFrameTarget(views: View[], numTargets: number): Map<number, View[]> {
  const groups = new Map<number, View[]>();
  for (const v of views) {
    if (v.status !== 'used') continue;
    const k = frameTargetKey(v, numTargets);
    let g = groups.get(k);
    if (!g) groups.set(k, (g = []));
    g.push(v);
  }
  return groups;
}

/** Step 2: relative camera poses per camera pair from co-visible frames. */
export function buildViewGraph(views: View[], numCameras: number, numTargets: number): GraphEdge[] {
  const samples = new Map<number, Pose[]>();
  for (const group of groupByFrameTarget(views, numTargets).values()) {
    for (let i = 0; i < group.length; i++) {
      for (let j = 0; j < group.length; j++) {
        const va = group[i]!;
        const vb = group[j]!;
        if (va.camera >= vb.camera) continue;
        const T_a_b = compose(va.T_cam_target!, inverse(vb.T_cam_target!));
        const key = va.camera * numCameras + vb.camera;
        let list = samples.get(key);
        if (!list) samples.set(key, (list = []));
        list.push(T_a_b);
      }
    }
  }
  const edges: GraphEdge[] = [];
  for (const [key, list] of samples) {
    const a = Math.floor(key / numCameras);
    const b = key % numCameras;
    const avg = averagePosesRobust(list);
    edges.push({ a, b, T_a_b: avg.pose, support: avg.inliers, samples: list.length });
  }
  return edges;
}

export interface SpanningTree {
  /** T_ref_cam per camera, or null when the camera is not connected to the reference. */
  T_ref_cam: (Pose | null)[];
  /** Parent camera in the tree (-1 for the reference and unconnected cameras). */
  parent: number[];
  /** Support of the edge to the parent. */
  support: number[];
  /** Connected groups of camera indices (the first contains the reference). */
  groups: number[][];
}

/** Step 3: maximum spanning tree by support, from the reference camera (Prim). */
export function spanningTree(edges: GraphEdge[], numCameras: number, reference: number, T_ref_ref: Pose): SpanningTree {
  const T: (Pose | null)[] = new Array(numCameras).fill(null);
  const parent = new Array<number>(numCameras).fill(-1);
  const support = new Array<number>(numCameras).fill(0);
  T[reference] = T_ref_ref;
  const inTree = new Array<boolean>(numCameras).fill(false);
  inTree[reference] = true;
  for (;;) {
    let best: GraphEdge | undefined;
    let bestFrom = -1;
    for (const e of edges) {
      if (e.support <= 0) continue;
      if (inTree[e.a] === inTree[e.b]) continue;
      if (!best || e.support > best.support) {
        best = e;
        bestFrom = inTree[e.a] ? e.a : e.b;
      }
    }
    if (!best) break;
    const to = bestFrom === best.a ? best.b : best.a;
    // T_ref_to = T_ref_from · T_from_to
    const T_from_to = bestFrom === best.a ? best.T_a_b : inverse(best.T_a_b);
    T[to] = compose(T[bestFrom]!, T_from_to);
    parent[to] = bestFrom;
    support[to] = best.support;
    inTree[to] = true;
  }
  // Connected components (undirected, any positive-support edge).
  const comp = new Array<number>(numCameras).fill(-1);
  const groups: number[][] = [];
  const order = [reference, ...Array.from({ length: numCameras }, (_, i) => i).filter((i) => i !== reference)];
  for (const s of order) {
    if (comp[s] !== -1) continue;
    const g: number[] = [];
    const stack = [s];
    comp[s] = groups.length;
    while (stack.length) {
      const c = stack.pop()!;
      g.push(c);
      for (const e of edges) {
        if (e.support <= 0) continue;
        const o = e.a === c ? e.b : e.b === c ? e.a : -1;
        if (o >= 0 && comp[o] === -1) {
          comp[o] = groups.length;
          stack.push(o);
        }
      }
    }
    groups.push(g.sort((a, b) => a - b));
  }
  return { T_ref_cam: T, parent, support, groups };
}

export interface FramePoseInit {
  /** Key → T_ref_target for every (frame, target) group with a consistent pose. */
  poses: Map<number, Pose>;
  /** Views set aside because they contradict the others in their frame. */
  inconsistent: View[];
}

/** Thresholds for "contradicts the other cameras of its frame". */
export const CONSISTENCY_ROTATION_RAD = (5 * Math.PI) / 180;
/** Relative to the target's distance from the reference camera. */
export const CONSISTENCY_TRANSLATION_FRACTION = 0.05;

/**
 * Step 4: T_ref_target per (frame, target) from its views, given camera
 * extrinsics; see consensusPoses.
 */
export function initialiseFramePoses(views: View[], numTargets: number, T_ref_cam: (Pose | null)[], cameraNames: string[]): FramePoseInit {
  return consensusPoses(groupByFrameTarget(views, numTargets), (v) => compose(T_ref_cam[v.camera]!, v.T_cam_target!), cameraNames);
}

/**
 * One pose per group of views (a frame, or a frame and target), each view
 * proposing a candidate. With two or more views, the largest set of mutually
 * agreeing candidates wins; a view outside it is set aside as inconsistent.
 * When no two views agree (e.g. two cameras, one with a flipped board), all
 * views of the group are set aside: with two views nothing says which one is
 * wrong.
 */
export function consensusPoses(groups: Map<number, View[]>, candidate: (v: View) => Pose, cameraNames: string[]): FramePoseInit {
  const poses = new Map<number, Pose>();
  const inconsistent: View[] = [];
  for (const [key, group] of groups) {
    const candidates = group.map(candidate);
    if (group.length === 1) {
      poses.set(key, candidates[0]!);
      continue;
    }
    const agree = (i: number, j: number): boolean => {
      const a = candidates[i]!;
      const b = candidates[j]!;
      const dist = Math.max(Math.hypot(a.t[0]!, a.t[1]!, a.t[2]!), Math.hypot(b.t[0]!, b.t[1]!, b.t[2]!), 0.1);
      const dt = Math.hypot(a.t[0]! - b.t[0]!, a.t[1]! - b.t[1]!, a.t[2]! - b.t[2]!);
      return rotationAngle(a.R, b.R) < CONSISTENCY_ROTATION_RAD && dt < CONSISTENCY_TRANSLATION_FRACTION * dist;
    };
    let bestSet: number[] = [];
    for (let i = 0; i < group.length; i++) {
      const set = [i];
      for (let j = 0; j < group.length; j++) if (j !== i && agree(i, j)) set.push(j);
      if (set.length > bestSet.length) bestSet = set;
    }
    // Ties between different sets of the same size leave nothing to trust.
    let tie = false;
    for (let i = 0; i < group.length && !tie; i++) {
      if (bestSet.includes(i)) continue;
      let n = 1;
      for (let j = 0; j < group.length; j++) if (j !== i && agree(i, j)) n++;
      if (n >= bestSet.length) tie = true;
    }
    if (bestSet.length < 2 || tie) {
      for (const v of group) {
        v.status = 'inconsistent';
        v.reason = `the ${group.length} views of this frame (cameras ${group
          .map((g) => cameraNames[g.camera])
          .join(', ')}) disagree on the target's pose (a flipped or mislabelled detection?)`;
        inconsistent.push(v);
      }
      continue;
    }
    for (let i = 0; i < group.length; i++) {
      if (bestSet.includes(i)) continue;
      const v = group[i]!;
      v.status = 'inconsistent';
      v.reason = `its target pose contradicts the other cameras in this frame (${[...new Set(bestSet.map((k) => cameraNames[group[k]!.camera]))].join(', ')}) by more than 5° or 5 % of the distance (a board detected rotated by 180°?)`;
      inconsistent.push(v);
    }
    poses.set(key, averagePosesRobust(bestSet.map((k) => candidates[k]!)).pose);
  }
  return { poses, inconsistent };
}
