/**
 * Initialisation for `scene: fixed_targets` (a calibration room or bay: the
 * targets stay put, the rig moves). Unknowns: T_ref_cam per camera,
 * T_origin_target per target (the first target listed is the origin) and
 * T_origin_ref per frame (the rig pose, with the reference camera as the rig
 * frame).
 *
 * From the per-view PnP poses T_cam_target, known quantities grow outwards
 * until nothing changes:
 *   1. cameras: T_ref_cam from the same-target view graph (as for moving
 *      targets: two cameras seeing one target in one frame);
 *   2. targets: with cameras known, every frame gives T_ref_target(f) for the
 *      targets its known cameras see; two targets in one frame give a
 *      relative pose T_ta_tb; robust averages and a spanning tree from the
 *      origin target place the targets;
 *   3. rig poses: T_origin_ref(f) = T_origin_target · T_ref_target(f)⁻¹,
 *      robustly averaged over the frame's views of known cameras and targets;
 *   4. cameras not yet known: T_ref_cam = T_origin_ref(f)⁻¹ · T_origin_target ·
 *      T_cam_target⁻¹, averaged over their views in frames with a known pose.
 */
import { compose, inverse, poseIdentity, type Pose } from '../geometry/se3.js';
import { averagePosesRobust } from './average.js';
import { buildViewGraph, spanningTree, type GraphEdge } from './initialise.js';
import type { View } from './views.js';

export interface FixedSceneInit {
  T_ref_cam: (Pose | null)[];
  T_origin_target: (Pose | null)[];
  /** Frame index → T_origin_ref. */
  T_origin_ref: Map<number, Pose>;
  /** Parent camera in the same-target spanning tree (-1 if placed otherwise or the reference). */
  cameraParent: number[];
}

export function initialiseFixedScene(views: View[], numCameras: number, numTargets: number, reference: number): FixedSceneInit {
  const used = views.filter((v) => v.status === 'used');
  const camTree = spanningTree(buildViewGraph(views, numCameras, numTargets), numCameras, reference, poseIdentity());
  const T_ref_cam = camTree.T_ref_cam;
  const T_origin_target: (Pose | null)[] = new Array(numTargets).fill(null);
  T_origin_target[0] = poseIdentity();
  const T_origin_ref = new Map<number, Pose>();
  const byFrame = new Map<number, View[]>();
  for (const v of used) {
    let list = byFrame.get(v.frame);
    if (!list) byFrame.set(v.frame, (list = []));
    list.push(v);
  }

  for (let round = 0; round < 2 * (numCameras + numTargets); round++) {
    let progress = false;
    // 2. Targets from frames in which known cameras see two targets.
    if (T_origin_target.some((t) => t === null)) {
      const samples = new Map<number, Pose[]>();
      for (const list of byFrame.values()) {
        const refTarget = new Map<number, Pose>();
        for (const v of list) {
          const T = T_ref_cam[v.camera];
          if (T && !refTarget.has(v.target)) refTarget.set(v.target, compose(T, v.T_cam_target!));
        }
        const ts = [...refTarget.keys()];
        for (const a of ts) {
          for (const b of ts) {
            if (a >= b) continue;
            const key = a * numTargets + b;
            let s = samples.get(key);
            if (!s) samples.set(key, (s = []));
            s.push(compose(inverse(refTarget.get(a)!), refTarget.get(b)!));
          }
        }
      }
      const edges: GraphEdge[] = [...samples].map(([key, list]) => {
        const avg = averagePosesRobust(list);
        return { a: Math.floor(key / numTargets), b: key % numTargets, T_a_b: avg.pose, support: avg.inliers, samples: list.length };
      });
      // Grow from the targets already placed.
      for (;;) {
        let best: GraphEdge | undefined;
        for (const e of edges) {
          if ((T_origin_target[e.a] === null) === (T_origin_target[e.b] === null)) continue;
          if (!best || e.support > best.support) best = e;
        }
        if (!best) break;
        if (T_origin_target[best.a]) T_origin_target[best.b] = compose(T_origin_target[best.a]!, best.T_a_b);
        else T_origin_target[best.a] = compose(T_origin_target[best.b]!, inverse(best.T_a_b));
        progress = true;
      }
    }
    // 3. Rig poses of frames with a known camera seeing a known target.
    for (const [f, list] of byFrame) {
      if (T_origin_ref.has(f)) continue;
      const cands: Pose[] = [];
      for (const v of list) {
        const Tc = T_ref_cam[v.camera];
        const Tt = T_origin_target[v.target];
        if (Tc && Tt) cands.push(compose(Tt, inverse(compose(Tc, v.T_cam_target!))));
      }
      if (cands.length > 0) {
        T_origin_ref.set(f, averagePosesRobust(cands).pose);
        progress = true;
      }
    }
    // 4. Cameras not yet placed, from frames with a known rig pose.
    for (let c = 0; c < numCameras; c++) {
      if (T_ref_cam[c]) continue;
      const cands: Pose[] = [];
      for (const v of used) {
        if (v.camera !== c) continue;
        const Tf = T_origin_ref.get(v.frame);
        const Tt = T_origin_target[v.target];
        if (Tf && Tt) cands.push(compose(inverse(Tf), compose(Tt, inverse(v.T_cam_target!))));
      }
      if (cands.length > 0) {
        T_ref_cam[c] = averagePosesRobust(cands).pose;
        progress = true;
      }
    }
    if (!progress) break;
  }
  return { T_ref_cam, T_origin_target, T_origin_ref, cameraParent: camTree.parent };
}
