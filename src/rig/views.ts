/**
 * Views: all detections of one target by one camera in one frame. The unit
 * of PnP, of the residual blocks and of whole-view rejection.
 */
import type { Pose } from '../geometry/se3.js';
import type { Session } from '../io/types.js';

export type ViewStatus =
  | 'used'
  | 'too_few_points'
  | 'pnp_failed'
  | 'pnp_outlier'
  | 'inconsistent'
  | 'disconnected'
  | 'too_many_outliers'
  | 'unprojectable';

export interface View {
  index: number;
  camera: number;
  frame: number;
  target: number;
  /** Detection row indices into session.detections. */
  rows: Int32Array;
  status: ViewStatus;
  /** Why the view was set aside (for reports). */
  reason?: string;
  /** PnP estimate of T_cam_target. */
  T_cam_target?: Pose;
  pnpRmsPx?: number;
}

/** Groups detections by (camera, frame, target), in order of first appearance. */
export function groupViews(session: Session): View[] {
  const d = session.detections;
  const nt = session.targets.length;
  const nc = session.cameras.length;
  const key = (i: number) => (d.frame[i]! * nc + d.camera[i]!) * nt + d.target[i]!;
  const index = new Map<number, number>();
  const counts: number[] = [];
  const viewOfRow = new Int32Array(d.count);
  for (let i = 0; i < d.count; i++) {
    const k = key(i);
    let v = index.get(k);
    if (v === undefined) {
      v = counts.length;
      index.set(k, v);
      counts.push(0);
    }
    counts[v]!++;
    viewOfRow[i] = v;
  }
  const views: View[] = counts.map((c, v) => ({
    index: v,
    camera: -1,
    frame: -1,
    target: -1,
    rows: new Int32Array(c),
    status: 'used' as ViewStatus,
  }));
  const fill = new Int32Array(views.length);
  for (let i = 0; i < d.count; i++) {
    const view = views[viewOfRow[i]!]!;
    if (view.camera < 0) {
      view.camera = d.camera[i]!;
      view.frame = d.frame[i]!;
      view.target = d.target[i]!;
    }
    view.rows[fill[view.index]!++] = i;
  }
  return views;
}

/** Gathers a view's target points (xyz) and pixels (uv) for the given rows. */
export function viewData(session: Session, view: View, rows: ArrayLike<number> = view.rows): { points: Float64Array; pixels: Float64Array } {
  const d = session.detections;
  const target = session.targets[view.target]!;
  const n = rows.length;
  const points = new Float64Array(3 * n);
  const pixels = new Float64Array(2 * n);
  for (let k = 0; k < n; k++) {
    const i = rows[k]!;
    const id = d.point[i]!;
    points[3 * k] = target.points[3 * id]!;
    points[3 * k + 1] = target.points[3 * id + 1]!;
    points[3 * k + 2] = target.points[3 * id + 2]!;
    pixels[2 * k] = d.u[i]!;
    pixels[2 * k + 1] = d.v[i]!;
  }
  return { points, pixels };
}

/**
 * A camera's usage figures for reports: RMS over the detections used
 * (sqrt(Σ(du² + dv²) / used)), detections used and rejected, views used and
 * set aside. `sumSqPx` and `used` are the camera's totals over the detections used.
 */
export function cameraUsage(
  views: View[],
  camera: number,
  sumSqPx: number,
  used: number,
  detections: number,
): { rmsPx: number; detectionsUsed: number; detectionsRejected: number; viewsUsed: number; viewsRejected: number } {
  let viewsUsed = 0;
  let viewsRejected = 0;
  for (const v of views) {
    if (v.camera !== camera) continue;
    if (v.status === 'used') viewsUsed++;
    else viewsRejected++;
  }
  return {
    rmsPx: used > 0 ? Math.sqrt(sumSqPx / used) : NaN,
    detectionsUsed: used,
    detectionsRejected: detections - used,
    viewsUsed,
    viewsRejected,
  };
}
