/**
 * Is the rig one connected whole? Groups of cameras that no frame links, and
 * cameras or targets the initialisation could not place, stop the solve with a
 * RigSolveError that names them and says what to capture.
 */
import type { Pose } from '../geometry/se3.js';
import type { Session } from '../io/types.js';
import { RigSolveError } from './errors.js';
import type { View } from './views.js';

/** Connected camera groups over the views still in use. */
export function connectedGroups(views: View[], nc: number, poseKey: (v: View) => number, reference: number): number[][] {
  const parent = Array.from({ length: nc }, (_, i) => i);
  const find = (x: number): number => (parent[x] === x ? x : (parent[x] = find(parent[x]!)));
  const byKey = new Map<number, number>();
  for (const v of views) {
    if (v.status !== 'used') continue;
    const k = poseKey(v);
    const other = byKey.get(k);
    if (other === undefined) byKey.set(k, v.camera);
    else parent[find(v.camera)] = find(other);
  }
  const groups = new Map<number, number[]>();
  for (let c = 0; c < nc; c++) {
    const r = find(c);
    let g = groups.get(r);
    if (!g) groups.set(r, (g = []));
    g.push(c);
  }
  const list = [...groups.values()];
  list.sort((a, b) => (a.includes(reference) ? -1 : b.includes(reference) ? 1 : a[0]! - b[0]!));
  return list;
}

/** fixed_targets: every camera and target must be placed by the initialisation. */
export function checkFixedScenePlaced(session: Session, views: View[], T_ref_cam: (Pose | null)[], T_origin_target: (Pose | null)[]): void {
  checkConnected(session, views, [], 0);
  const cams = session.cameras.filter((_, c) => !T_ref_cam[c]).map((c) => c.name);
  const tgts = session.targets.filter((_, t) => !T_origin_target[t]).map((t) => t.name);
  if (cams.length === 0 && tgts.length === 0) return;
  const parts: string[] = [];
  if (tgts.length) parts.push(`target${tgts.length > 1 ? 's' : ''} ${tgts.join(', ')} cannot be placed relative to ${session.targets[0]!.name} (the scene origin)`);
  if (cams.length) parts.push(`camera${cams.length > 1 ? 's' : ''} ${cams.join(', ')} cannot be placed relative to ${session.referenceCamera}`);
  throw new RigSolveError(
    'rig.disconnected',
    `${parts.join('; ')}: capture frames in which one camera sees two targets at once, and frames in which two cameras see the same target`,
  );
}

/** Throws a RigSolveError naming the groups and what to capture when the cameras are not all linked. */
export function checkConnected(session: Session, views: View[], groups: number[][], reference: number): void {
  const names = session.cameras.map((c) => c.name);
  const withViews = new Set(views.filter((v) => v.status === 'used').map((v) => v.camera));
  const noViews = names.filter((_, c) => !withViews.has(c));
  if (noViews.length > 0) {
    throw new RigSolveError(
      'rig.camera_without_views',
      `no usable views for camera${noViews.length > 1 ? 's' : ''} ${noViews.join(', ')}: every view was set aside (too few points, PnP failure or outliers); capture frames in which ${noViews.length > 1 ? 'they see' : 'it sees'} the whole target sharply`,
    );
  }
  if (groups.length <= 1) return;
  const fmt = (g: number[]) => `{${g.map((c) => names[c]).join(', ')}}`;
  const refGroup = groups.find((g) => g.includes(reference))!;
  const others = groups.filter((g) => g !== refGroup);
  const parts = others.map((g) => `no frame links ${fmt(g)} to ${fmt(refGroup)}`);
  throw new RigSolveError(
    'rig.disconnected',
    `${parts.join('; ')}: capture views in which a camera of each group sees the target at once`,
  );
}
