/**
 * Brown–Conrady camera model: pinhole projection with polynomial radial
 * distortion and decentering (tangential) distortion.
 *
 * Parameters, in storage order (formats.md): fx fy cx cy k1 k2 p1 p2 k3.
 *
 *   x = X/Z,  y = Y/Z,  r² = x² + y²
 *   radial = 1 + k1 r² + k2 r⁴ + k3 r⁶
 *   x_d = x·radial + 2 p1 x y + p2 (r² + 2x²)
 *   y_d = y·radial + p1 (r² + 2y²) + 2 p2 x y
 *   u = fx·x_d + cx,  v = fy·y_d + cy
 *
 * Sources: D. C. Brown, "Decentering Distortion of Lenses", Photogrammetric
 * Engineering 32(3), 1966; A. E. Conrady, "Decentred Lens-Systems", Monthly
 * Notices of the Royal Astronomical Society 79, 1919.
 *
 * Valid region: Z > MIN_DEPTH_M (1e-6 m) and r² < r²_max, where r²_max is
 * the first positive root of d(r·radial(r))/dr = 1 + 3k1 r² + 5k2 r⁴ + 7k3 r⁶
 * (+∞ if none). Beyond that turning point the radial mapping folds back and
 * points far outside the field would land inside the image; they are
 * reported invalid instead. r²_max is cached per (k1, k2, k3).
 *
 * Jacobians. With dR = k1 + 2k2 r² + 3k3 r⁴ (so ∂radial/∂x = 2x·dR), the
 * distortion Jacobian D = ∂(x_d, y_d)/∂(x, y) is symmetric:
 *   a = ∂x_d/∂x = radial + 2x²·dR + 2p1 y + 6p2 x
 *   b = ∂x_d/∂y = ∂y_d/∂x = 2xy·dR + 2p1 x + 2p2 y
 *   d = ∂y_d/∂y = radial + 2y²·dR + 6p1 y + 2p2 x
 * and ∂(x, y)/∂(X, Y, Z) = [[1/Z, 0, −x/Z], [0, 1/Z, −y/Z]], so
 *   J_uv_p (2x3) = [[fx·a/Z, fx·b/Z, −fx(a x + b y)/Z],
 *                   [fy·b/Z, fy·d/Z, −fy(b x + d y)/Z]]
 *   J_uv_intr (2x9), columns fx fy cx cy k1 k2 p1 p2 k3:
 *     u: [x_d, 0, 1, 0, fx x r², fx x r⁴, 2fx x y, fx(r² + 2x²), fx x r⁶]
 *     v: [0, y_d, 0, 1, fy y r², fy y r⁴, fy(r² + 2y²), 2fy x y, fy y r⁶]
 */
import { firstPositiveRoot, LimitCache, MIN_DEPTH_M } from './limits.js';
import type { CameraModel } from './model.js';

export const BROWN_CONRADY_PARAM_NAMES = ['fx', 'fy', 'cx', 'cy', 'k1', 'k2', 'p1', 'p2', 'k3'] as const;

/**
 * r²_max: the first positive root of 1 + 3k1 s + 5k2 s² + 7k3 s³ (s = r²,
 * normalised image plane), +∞ when the radial mapping never turns, NaN for
 * non-finite coefficients. Points with r² ≥ r²_max are invalid.
 */
export function brownConradyMaxRadiusSquared(k1: number, k2: number, k3: number): number {
  return firstPositiveRoot([1, 3 * k1, 5 * k2, 7 * k3]);
}

const limits = new LimitCache((k1, k2, k3, _k4, out) => {
  out[0] = brownConradyMaxRadiusSquared(k1, k2, k3);
  out[1] = 0;
});

function project(
  params: ArrayLike<number>,
  p_cam: ArrayLike<number>,
  uv: Float64Array,
  J_uv_p?: Float64Array,
  J_uv_intr?: Float64Array,
): boolean {
  const Z = p_cam[2]!;
  if (!(Z > MIN_DEPTH_M)) return false;
  const k1 = params[4]!;
  const k2 = params[5]!;
  const p1 = params[6]!;
  const p2 = params[7]!;
  const k3 = params[8]!;
  const iz = 1 / Z;
  const x = p_cam[0]! * iz;
  const y = p_cam[1]! * iz;
  const r2 = x * x + y * y;
  if (!(r2 < limits.lookup(k1, k2, k3, 0))) return false;
  const radial = 1 + r2 * (k1 + r2 * (k2 + r2 * k3));
  const xy2 = 2 * x * y;
  const xd = x * radial + p1 * xy2 + p2 * (r2 + 2 * x * x);
  const yd = y * radial + p1 * (r2 + 2 * y * y) + p2 * xy2;
  const fx = params[0]!;
  const fy = params[1]!;
  uv[0] = fx * xd + params[2]!;
  uv[1] = fy * yd + params[3]!;
  if (J_uv_p !== undefined) {
    const dR = k1 + r2 * (2 * k2 + 3 * k3 * r2);
    const a = radial + 2 * x * x * dR + 2 * p1 * y + 6 * p2 * x;
    const b = xy2 * dR + 2 * p1 * x + 2 * p2 * y;
    const d = radial + 2 * y * y * dR + 6 * p1 * y + 2 * p2 * x;
    const fxz = fx * iz;
    const fyz = fy * iz;
    J_uv_p[0] = fxz * a;
    J_uv_p[1] = fxz * b;
    J_uv_p[2] = -fxz * (a * x + b * y);
    J_uv_p[3] = fyz * b;
    J_uv_p[4] = fyz * d;
    J_uv_p[5] = -fyz * (b * x + d * y);
  }
  if (J_uv_intr !== undefined) {
    const r4 = r2 * r2;
    const r6 = r4 * r2;
    J_uv_intr[0] = xd;
    J_uv_intr[1] = 0;
    J_uv_intr[2] = 1;
    J_uv_intr[3] = 0;
    J_uv_intr[4] = fx * x * r2;
    J_uv_intr[5] = fx * x * r4;
    J_uv_intr[6] = fx * xy2;
    J_uv_intr[7] = fx * (r2 + 2 * x * x);
    J_uv_intr[8] = fx * x * r6;
    J_uv_intr[9] = 0;
    J_uv_intr[10] = yd;
    J_uv_intr[11] = 0;
    J_uv_intr[12] = 1;
    J_uv_intr[13] = fy * y * r2;
    J_uv_intr[14] = fy * y * r4;
    J_uv_intr[15] = fy * (r2 + 2 * y * y);
    J_uv_intr[16] = fy * xy2;
    J_uv_intr[17] = fy * y * r6;
  }
  return Number.isFinite(uv[0]!) && Number.isFinite(uv[1]!);
}

/** Largest number of undistortion iterations (Newton or fixed-point steps). */
const MAX_ITERATIONS = 100;
/** Largest number of step halvings in one Newton line search. */
const MAX_HALVINGS = 40;
/**
 * Acceptance: the distorted point of the solution must match the target to
 * 1e-12 relative to max(1, |target|) in normalised units, i.e. about 1e-9 px
 * for a 1000 px focal length. Newton normally ends far below this, at
 * rounding level.
 */
const ACCEPT_TOLERANCE = 1e-12;

/**
 * Undistorts the normalised distorted point (xd, yd) for coefficients k1 k2
 * p1 p2 k3: finds (x, y) with distort(x, y) = (xd, yd) and r² < r²_max.
 * Newton on F(x, y) = distort(x, y) − (xd, yd) with the analytic symmetric
 * 2x2 Jacobian D and a backtracking line search that keeps r² < r²_max and
 * decreases ‖F‖∞; when Newton cannot make progress (singular D, no
 * decrease) a fixed-point step x ← (x_d − tangential)/radial is taken
 * instead. Writes (x, y) to out2; returns false when not converged.
 */
export function brownConradyUndistort(
  k1: number,
  k2: number,
  p1: number,
  p2: number,
  k3: number,
  xd: number,
  yd: number,
  out2: Float64Array,
): boolean {
  const r2max = limits.lookup(k1, k2, k3, 0);
  if (!(r2max > 0) || !Number.isFinite(xd) || !Number.isFinite(yd)) return false;
  const scale = Math.max(1, Math.abs(xd), Math.abs(yd));
  let x = xd;
  let y = yd;
  let r2 = x * x + y * y;
  if (!(r2 < r2max)) {
    // Start inside the valid region, on the same ray.
    const shrink = Math.sqrt((0.5 * r2max) / r2);
    x *= shrink;
    y *= shrink;
    r2 = x * x + y * y;
  }
  let radial = 1 + r2 * (k1 + r2 * (k2 + r2 * k3));
  let fx = x * radial + 2 * p1 * x * y + p2 * (r2 + 2 * x * x) - xd;
  let fy = y * radial + p1 * (r2 + 2 * y * y) + 2 * p2 * x * y - yd;
  let err = Math.max(Math.abs(fx), Math.abs(fy));
  for (let it = 0; it < MAX_ITERATIONS && err > 0; it++) {
    const dR = k1 + r2 * (2 * k2 + 3 * k3 * r2);
    const a = radial + 2 * x * x * dR + 2 * p1 * y + 6 * p2 * x;
    const b = 2 * x * y * dR + 2 * p1 * x + 2 * p2 * y;
    const d = radial + 2 * y * y * dR + 6 * p1 * y + 2 * p2 * x;
    const det = a * d - b * b;
    let accepted = false;
    // Once the tolerance is met, only full Newton steps are tried: they reach
    // rounding level in one or two more steps, and a failing one means we are there.
    const converged = err <= ACCEPT_TOLERANCE * scale;
    if (det !== 0 && Number.isFinite(det)) {
      const sx = -(d * fx - b * fy) / det;
      const sy = -(a * fy - b * fx) / det;
      let t = 1;
      const halvings = converged ? 1 : MAX_HALVINGS;
      for (let h = 0; h < halvings; h++, t *= 0.5) {
        const nx = x + t * sx;
        const ny = y + t * sy;
        const nr2 = nx * nx + ny * ny;
        if (!(nr2 < r2max)) continue;
        const nradial = 1 + nr2 * (k1 + nr2 * (k2 + nr2 * k3));
        const nfx = nx * nradial + 2 * p1 * nx * ny + p2 * (nr2 + 2 * nx * nx) - xd;
        const nfy = ny * nradial + p1 * (nr2 + 2 * ny * ny) + 2 * p2 * nx * ny - yd;
        const nerr = Math.max(Math.abs(nfx), Math.abs(nfy));
        if (nerr < err) {
          x = nx;
          y = ny;
          r2 = nr2;
          radial = nradial;
          fx = nfx;
          fy = nfy;
          err = nerr;
          accepted = true;
          break;
        }
      }
    }
    if (!accepted) {
      // Newton made no progress: either we sit at rounding level (done) or
      // the local model is poor, where the fixed-point map still contracts
      // for moderate distortion.
      if (converged) break;
      if (!(radial > 0)) return false;
      const nx = (xd - 2 * p1 * x * y - p2 * (r2 + 2 * x * x)) / radial;
      const ny = (yd - p1 * (r2 + 2 * y * y) - 2 * p2 * x * y) / radial;
      const nr2 = nx * nx + ny * ny;
      if (!(nr2 < r2max)) return false;
      x = nx;
      y = ny;
      r2 = nr2;
      radial = 1 + r2 * (k1 + r2 * (k2 + r2 * k3));
      fx = x * radial + 2 * p1 * x * y + p2 * (r2 + 2 * x * x) - xd;
      fy = y * radial + p1 * (r2 + 2 * y * y) + 2 * p2 * x * y - yd;
      err = Math.max(Math.abs(fx), Math.abs(fy));
    }
  }
  out2[0] = x;
  out2[1] = y;
  return err <= ACCEPT_TOLERANCE * scale && r2 < r2max;
}

function unprojectToPlane(params: ArrayLike<number>, uv: ArrayLike<number>, out2: Float64Array): boolean {
  const xd = (uv[0]! - params[2]!) / params[0]!;
  const yd = (uv[1]! - params[3]!) / params[1]!;
  return brownConradyUndistort(params[4]!, params[5]!, params[6]!, params[7]!, params[8]!, xd, yd, out2);
}

const planeScratch = new Float64Array(2);

function unproject(params: ArrayLike<number>, uv: ArrayLike<number>, ray: Float64Array): boolean {
  if (!unprojectToPlane(params, uv, planeScratch)) return false;
  const x = planeScratch[0]!;
  const y = planeScratch[1]!;
  const n = Math.sqrt(x * x + y * y + 1);
  ray[0] = x / n;
  ray[1] = y / n;
  ray[2] = 1 / n;
  return Number.isFinite(n);
}

/** The Brown–Conrady model: fx fy cx cy k1 k2 p1 p2 k3. */
export const brownConrady: CameraModel = Object.freeze({
  name: 'brown-conrady' as const,
  paramNames: BROWN_CONRADY_PARAM_NAMES,
  numParams: 9,
  numDistortion: 5,
  project,
  unproject,
  unprojectToPlane,
});
