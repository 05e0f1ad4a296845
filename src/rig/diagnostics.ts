/**
 * Degenerate captures, detected and explained in words a user can act on.
 * Every message names the camera and what to capture next.
 *
 * Checks on the views a solve actually used (status 'used'):
 *  - no used view for a camera: an error (the camera cannot be placed);
 *  - fewer than MIN_USED_VIEWS used views: a warning (its extrinsic rests on
 *    a handful of board poses; one bad view would move it unnoticed);
 *  - cameras whose intrinsics are solved (solveIntrinsics): the board poses
 *    must make focal length and principal point observable
 *    (intrinsicsGeometryWarning, below).
 * A camera linked to the rest by a single frame is reported by solve.ts from
 * the initial spanning tree.
 *
 * Poorly constrained covariances: poorlyConstrainedMessage turns the
 * solver's status (blocks labelled "camera NAME" / "frame F target T" with
 * tangent indices [rx ry rz tx ty tz]) into one line naming the cameras, the
 * directions that are weak and what to capture.
 */
import { act, type Pose } from '../geometry/se3.js';
import type { Session } from '../io/types.js';
import type { CovarianceResult } from '../solver/index.js';
import { RigSolveError } from './errors.js';
import type { View } from './views.js';

/** Used views per camera below which a warning is given (common practice: several board poses per camera). */
export const MIN_USED_VIEWS = 5;

export interface IntrinsicsGeometryOptions {
  /**
   * All views tilted less than this (angle between the board normal and the
   * optical axis) count as nearly fronto-parallel. Default 15°. Common
   * practice recommends tilts of roughly 20–45°.
   */
  minTiltDeg: number;
  /**
   * All board normals within this angle of each other count as one
   * orientation: parallel board planes (a pure translation between views)
   * add no constraint on the intrinsics beyond the first (Zhang, "A flexible
   * new technique for camera calibration", 2000, sec. 3.2). Default 5°.
   */
  minOrientationSpreadDeg: number;
  /**
   * Distances of the board centre with (max − min)/median below this count as
   * one distance. Default 0.2. Common practice: vary the distance so the board
   * fills the image near and covers it in pieces far away.
   */
  minDistanceSpread: number;
}

export const DEFAULT_INTRINSICS_GEOMETRY: IntrinsicsGeometryOptions = Object.freeze({
  minTiltDeg: 15,
  minOrientationSpreadDeg: 5,
  minDistanceSpread: 0.2,
});

const DEG = 180 / Math.PI;

/**
 * Checks whether a camera's board poses make its intrinsics observable.
 * `T_cam_target` are the camera's view poses; `centre_target` is the board
 * centre in the target frame (default the target origin), one per view or one
 * for all. Returns one warning naming the camera and what to capture next, or
 * undefined when the geometry is varied enough (or there are no views).
 *
 * Tilt of a view: acos|n_z| with n = R_cam_target·[0 0 1] the board normal in
 * the camera frame. Distance: ‖T_cam_target · centre‖.
 */
export function intrinsicsGeometryWarning(
  camera: string,
  T_cam_target: readonly Pose[],
  centre_target: ArrayLike<number> | readonly ArrayLike<number>[] = [0, 0, 0],
  opts: Partial<IntrinsicsGeometryOptions> = {},
): string | undefined {
  const o = { ...DEFAULT_INTRINSICS_GEOMETRY, ...opts };
  const n = T_cam_target.length;
  if (n === 0) return undefined;
  const centreOf = (k: number): ArrayLike<number> =>
    Array.isArray(centre_target) && typeof centre_target[0] !== 'number' ? (centre_target as ArrayLike<number>[])[k]! : (centre_target as ArrayLike<number>);
  const normals: number[][] = [];
  const tilts: number[] = [];
  const dists: number[] = [];
  for (let k = 0; k < n; k++) {
    const R = T_cam_target[k]!.R;
    const nrm = [R[2]!, R[5]!, R[8]!];
    normals.push(nrm);
    tilts.push(Math.acos(Math.min(1, Math.abs(nrm[2]!))) * DEG);
    const c = act(T_cam_target[k]!, centreOf(k));
    dists.push(Math.hypot(c[0]!, c[1]!, c[2]!));
  }
  // Orientation spread: largest angle between any board normal and the first (sign-free).
  let spread = 0;
  for (let a = 0; a < n; a++)
    for (let b = a + 1; b < n; b++) {
      const dot = Math.abs(normals[a]![0]! * normals[b]![0]! + normals[a]![1]! * normals[b]![1]! + normals[a]![2]! * normals[b]![2]!);
      spread = Math.max(spread, Math.acos(Math.min(1, dot)) * DEG);
    }
  const maxTilt = Math.max(...tilts);
  const sorted = [...dists].sort((x, y) => x - y);
  const med = sorted[sorted.length >> 1]!;
  const dMin = sorted[0]!;
  const dMax = sorted[sorted.length - 1]!;
  const problems: string[] = [];
  const todo: string[] = [];
  const all = n === 1 ? 'its only view is' : `all ${n} views are`;
  if (maxTilt < o.minTiltDeg) {
    problems.push(`${all} nearly fronto-parallel (largest tilt ${maxTilt.toFixed(1)}° < ${o.minTiltDeg}°), so focal length and principal point are poorly observable`);
    todo.push('views with the board tilted 20–45° about its horizontal and about its vertical axis');
  } else if (spread < o.minOrientationSpreadDeg) {
    problems.push(`${all} at one board orientation (normals within ${spread.toFixed(1)}°): parallel board planes add no constraint on the intrinsics`);
    todo.push('views with the board turned to different tilts (about both axes)');
  }
  if (n === 1 || (dMax - dMin) / med < o.minDistanceSpread) {
    problems.push(`${n === 1 ? 'it is' : 'they are'} at one distance (${dMin.toFixed(2)}–${dMax.toFixed(2)} m)`);
    todo.push(`views nearer (board filling the image) and farther than ${med.toFixed(2)} m`);
  }
  if (problems.length === 0) return undefined;
  return `camera ${camera}: intrinsics are being solved but ${problems.join('; ')} → capture ${todo.join(', and ')}`;
}

export type CaptureFindingCode = 'no_views' | 'few_views' | 'intrinsics_geometry';

export interface CaptureFinding {
  code: CaptureFindingCode;
  camera: string;
  severity: 'warning' | 'error';
  message: string;
}

export interface CaptureCheckOptions {
  minUsedViews: number;
  intrinsics: Partial<IntrinsicsGeometryOptions>;
}

/** Counts the statuses of a camera's set-aside views, e.g. "2 too_few_points, 1 pnp_failed". */
function setAsideSummary(views: readonly View[]): string {
  const counts = new Map<string, number>();
  for (const v of views) if (v.status !== 'used') counts.set(v.status, (counts.get(v.status) ?? 0) + 1);
  return [...counts].map(([s, k]) => `${k} ${s.replace(/_/g, ' ')}`).join(', ');
}

function targetCentre(session: Session, target: number): Float64Array {
  const t = session.targets[target]!;
  const c = new Float64Array(3);
  for (let i = 0; i < t.numPoints; i++) for (let k = 0; k < 3; k++) c[k]! += t.points[3 * i + k]! / t.numPoints;
  return c;
}

/** Findings for every camera of the session over the given views (see the file comment). */
export function diagnoseCapture(session: Session, views: readonly View[], opts: Partial<CaptureCheckOptions> = {}): CaptureFinding[] {
  const minViews = opts.minUsedViews ?? MIN_USED_VIEWS;
  const out: CaptureFinding[] = [];
  session.cameras.forEach((cam, c) => {
    const mine = views.filter((v) => v.camera === c);
    const used = mine.filter((v) => v.status === 'used');
    const aside = setAsideSummary(mine);
    if (used.length === 0) {
      out.push({
        code: 'no_views',
        camera: cam.name,
        severity: 'error',
        message: `camera ${cam.name} has no usable view (${mine.length ? `${mine.length} set aside: ${aside}` : 'no detections'}) → capture frames in which ${cam.name} sees the whole target sharply, together with a camera already linked to the rig`,
      });
      return;
    }
    if (used.length < minViews) {
      out.push({
        code: 'few_views',
        camera: cam.name,
        severity: 'warning',
        message: `camera ${cam.name}: only ${used.length} view${used.length === 1 ? '' : 's'} used${aside ? ` (${aside} set aside)` : ''}, fewer than ${minViews}; its pose rests on few board positions → capture at least ${minViews - used.length} more frame${minViews - used.length === 1 ? '' : 's'} in which ${cam.name} sees the target at different places in its image, distances and tilts`,
      });
    }
    if (cam.solveIntrinsics) {
      const withPose = used.filter((v) => v.T_cam_target);
      const w = intrinsicsGeometryWarning(
        cam.name,
        withPose.map((v) => v.T_cam_target!),
        withPose.map((v) => targetCentre(session, v.target)),
        opts.intrinsics,
      );
      if (w) out.push({ code: 'intrinsics_geometry', camera: cam.name, severity: 'warning', message: w });
    }
  });
  return out;
}

/**
 * The warnings of diagnoseCapture as lines for RigSolution.warnings. Throws
 * RigSolveError 'rig.camera_without_views' when any camera has no usable view.
 */
export function captureWarnings(session: Session, views: readonly View[], opts: Partial<CaptureCheckOptions> = {}): string[] {
  const findings = diagnoseCapture(session, views, opts);
  const errors = findings.filter((f) => f.severity === 'error');
  if (errors.length) throw new RigSolveError('rig.camera_without_views', errors.map((f) => f.message).join('; '));
  return findings.map((f) => f.message);
}

const TANGENT_NAMES = ['rotation about x', 'rotation about y', 'rotation about z', 'translation along x', 'translation along y', 'translation along z'];

/**
 * One line for RigSolveError 'rig.poorly_constrained' from a failed
 * covariance status: which cameras (and frames), which directions of their
 * pose (left perturbation in the reference camera's axes), how many views
 * each used, and what to capture.
 */
export function poorlyConstrainedMessage(
  result: Extract<CovarianceResult, { ok: false }>,
  session: Session,
  views: readonly View[],
): string {
  const cams: string[] = [];
  const parts: string[] = [];
  const frames: string[] = [];
  for (const p of result.poorlyConstrained) {
    const dirs = p.tangentIndices.map((t) => TANGENT_NAMES[t] ?? `tangent ${t}`).join(', ');
    const m = /^camera (.+)$/.exec(p.label);
    if (m) {
      const name = m[1]!;
      const c = session.cameras.findIndex((x) => x.name === name);
      const used = views.filter((v) => v.camera === c && v.status === 'used').length;
      cams.push(name);
      parts.push(`camera ${name} (${dirs}; ${used} view${used === 1 ? '' : 's'} used)`);
    } else frames.push(`${p.label} (${dirs})`);
  }
  const what: string[] = [];
  if (parts.length) what.push(parts.join(', '));
  if (frames.length) what.push(`${frames.slice(0, 3).join(', ')}${frames.length > 3 ? ` and ${frames.length - 3} more` : ''}`);
  const where = what.length ? what.join('; ') : 'no single parameter stands out';
  const cond = Number.isFinite(result.reciprocalCondition) ? `, reciprocal condition ${result.reciprocalCondition.toExponential(1)}` : '';
  const capture = cams.length
    ? `capture more frames in which ${cams.join(', ')} and a camera linked to the reference see the whole target at once, at varied distances and tilts`
    : frames.length
      ? 'check those views (are the target points nearly collinear, or the target very far away?) and capture views that show more of the target'
      : 'capture more frames that link every camera to the reference at varied distances and tilts';
  return `the rig is poorly constrained (${result.reason.replace(/_/g, ' ')}${cond}): ${where} → ${capture}`;
}
