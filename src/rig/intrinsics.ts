/**
 * Intrinsics in the joint solve: initial values when the session omits them
 * (Zhang's method, see zhang.ts), parameters held fixed, and warnings when
 * the data leave a parameter poorly determined.
 */
import { cameraModel } from '../camera/registry.js';
import type { Session } from '../io/types.js';
import { solvePnP } from '../pnp/index.js';
import { act } from '../geometry/se3.js';
import { RigSolveError } from './errors.js';
import { viewData, type View } from './views.js';
import { zhangIntrinsics, zhangRadial, type PlanarView } from './zhang.js';
import type { CameraResult } from './solve.js';

/** Tangent indices of the intrinsic parameters named in `fixed` (names validated by the session loader). */
export function fixedIntrinsicIndices(fixed: readonly string[], paramNames: readonly string[]): number[] {
  return fixed.map((n) => paramNames.indexOf(n)).filter((i) => i >= 0);
}

/** Fraction of the image width within which a fisheye view is treated as perspective for the closed form. */
const FISHEYE_CENTRAL_FRACTION = 0.25;

/**
 * Initial intrinsics for camera c from its planar views (targets whose points
 * all have z = 0): Zhang's closed form for fx, fy, cx, cy, then k1, k2 by
 * linear least squares for brown-conrady (other distortion terms 0). For
 * kannala-brandt only pixels near the image centre are used, where the
 * equidistant projection is close to a perspective one, and distortion starts
 * at 0. Throws RigSolveError naming the camera when the views do not suffice.
 */
export function initialiseIntrinsics(session: Session, views: View[], c: number): Float64Array {
  const cam = session.cameras[c]!;
  const model = cameraModel(cam.model);
  const [w, h] = cam.resolution;
  const planar: PlanarView[] = [];
  for (const view of views) {
    if (view.camera !== c || view.status !== 'used') continue;
    const t = session.targets[view.target]!;
    let flat = true;
    for (let i = 0; i < t.numPoints; i++) if (t.points[3 * i + 2] !== 0) flat = false;
    if (!flat) continue;
    const { points, pixels } = viewData(session, view);
    const keep: number[] = [];
    for (let i = 0; i < pixels.length / 2; i++) {
      if (model.name === 'kannala-brandt') {
        const du = pixels[2 * i]! - 0.5 * (w - 1);
        const dv = pixels[2 * i + 1]! - 0.5 * (h - 1);
        if (Math.hypot(du, dv) > FISHEYE_CENTRAL_FRACTION * w) continue;
      }
      keep.push(i);
    }
    if (keep.length < 8) continue;
    planar.push({
      planeXY: Float64Array.from(keep.flatMap((i) => [points[3 * i]!, points[3 * i + 1]!])),
      pixels: Float64Array.from(keep.flatMap((i) => [pixels[2 * i]!, pixels[2 * i + 1]!])),
    });
  }
  const K = zhangIntrinsics(planar, w);
  if (!K) {
    throw new RigSolveError(
      'rig.intrinsics_init',
      `cannot initialise the intrinsics of camera ${cam.name} from its ${planar.length} planar view(s): ` +
        'capture at least three views of a flat target at clearly different tilts, or give approximate focal, center and distortion in the session',
    );
  }
  const params = new Float64Array(model.numParams);
  params[0] = K.fx;
  params[1] = K.fy;
  params[2] = K.cx;
  params[3] = K.cy;
  if (model.name === 'brown-conrady' && !cam.fixedIntrinsics.includes('k1')) {
    // Poses with the distortion-free K, then k1, k2 by linear least squares.
    const ideal: Float64Array[] = [];
    const obs: Float64Array[] = [];
    for (const pv of planar) {
      const pts = new Float64Array((pv.planeXY.length / 2) * 3);
      for (let i = 0; i < pv.planeXY.length / 2; i++) {
        pts[3 * i] = pv.planeXY[2 * i]!;
        pts[3 * i + 1] = pv.planeXY[2 * i + 1]!;
      }
      try {
        const fit = solvePnP(model, params, pts, pv.pixels);
        const xy = new Float64Array(pv.planeXY.length);
        const p = new Float64Array(3);
        for (let i = 0; i < pts.length / 3; i++) {
          act(fit.T_cam_target, pts.subarray(3 * i, 3 * i + 3), p);
          xy[2 * i] = p[0]! / p[2]!;
          xy[2 * i + 1] = p[1]! / p[2]!;
        }
        ideal.push(xy);
        obs.push(pv.pixels);
      } catch {
        // A view PnP cannot handle adds nothing to the distortion estimate.
      }
    }
    const [k1, k2] = zhangRadial(K, ideal, obs);
    params[4] = k1;
    if (!cam.fixedIntrinsics.includes('k2')) params[5] = k2;
  }
  // Parameters the user holds fixed keep the session's values.
  const fixed = fixedIntrinsicIndices(cam.fixedIntrinsics, model.paramNames);
  for (const i of fixed) params[i] = cam.params[i]!;
  return params;
}

/** Thresholds for "poorly observed" (common practice: a calibration should pin focal and centre well below 1 %). */
export const FOCAL_RELATIVE_SIGMA_WARN = 0.005;
export const CENTER_RELATIVE_SIGMA_WARN = 0.01;
/** A distortion coefficient is poorly observed when its 1-sigma moves the image corner by more than this, px. */
export const DISTORTION_CORNER_PX_WARN = 1;

/**
 * Warnings naming each poorly observed intrinsic parameter with its relative
 * sigma. Focal and centre: sigma relative to the value (centre: relative to
 * the image size). Distortion: the coefficient's 1-sigma expressed as the
 * displacement it causes at the image corner.
 */
export function intrinsicsWarnings(cam: CameraResult, resolution: [number, number]): string[] {
  if (!cam.intrinsicsSolved || !cam.intrinsicsCovariance) return [];
  const n = cam.model.numParams;
  const sd = (i: number) => Math.sqrt(Math.max(0, cam.intrinsicsCovariance![i * n + i]!));
  const p = cam.intrinsics;
  const out: string[] = [];
  const advice = 'capture views that fill the image corners, at several distances and tilts of 30° or more';
  for (const i of [0, 1]) {
    const rel = sd(i) / Math.abs(p[i]!);
    if (rel > FOCAL_RELATIVE_SIGMA_WARN) {
      out.push(`camera ${cam.name}: ${cam.model.paramNames[i]} is poorly observed (1-sigma ${(100 * rel).toFixed(2)} % of its value); ${advice}`);
    }
  }
  for (const i of [2, 3]) {
    const rel = sd(i) / resolution[i - 2];
    if (rel > CENTER_RELATIVE_SIGMA_WARN) {
      out.push(`camera ${cam.name}: ${cam.model.paramNames[i]} is poorly observed (1-sigma ${(100 * rel).toFixed(2)} % of the image size); ${advice}`);
    }
  }
  // Normalised radius of the image corner.
  const rc = Math.hypot(Math.max(p[2]!, resolution[0] - p[2]!) / p[0]!, Math.max(p[3]!, resolution[1] - p[3]!) / p[1]!);
  const power: Record<string, number> = { k1: 2, k2: 4, k3: 6, k4: 8, p1: 2, p2: 2 };
  for (let i = 4; i < n; i++) {
    const name = cam.model.paramNames[i]!;
    const s = sd(i);
    if (s === 0) continue;
    const radius = cam.model.name === 'kannala-brandt' ? Math.atan(rc) : rc;
    const cornerPx = s * Math.pow(radius, power[name] ?? 2) * radius * p[0]!;
    if (cornerPx > DISTORTION_CORNER_PX_WARN) {
      const rel = p[i] !== 0 ? ` (${(100 * s / Math.abs(p[i]!)).toFixed(1)} % of its value)` : '';
      out.push(
        `camera ${cam.name}: ${name} is poorly observed: its 1-sigma ${s.toExponential(2)}${rel} moves the image corner by ${cornerPx.toFixed(1)} px; ${advice}`,
      );
    }
  }
  return out;
}
