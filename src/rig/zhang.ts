/**
 * Closed-form intrinsics from planar views: Zhang's method.
 * Z. Zhang, "A flexible new technique for camera calibration", IEEE TPAMI
 * 22(11), 2000, §3.1 and Appendix B.
 *
 * Each view's homography H = [h1 h2 h3] (target plane z = 0 → pixels) gives
 * two linear constraints on the symmetric B = K⁻ᵀK⁻¹, b = [B11 B12 B22 B13 B23 B33]:
 *   v12ᵀ b = 0,  (v11 − v22)ᵀ b = 0,
 *   v_ij = [h1i h1j, h1i h2j + h2i h1j, h2i h2j, h3i h1j + h1i h3j, h3i h2j + h2i h3j, h3i h3j]ᵀ.
 * Our camera models have zero skew, so B12 = 0 is added as a third row kind;
 * two views with different orientations then suffice. b is the right singular
 * vector of the stacked system for the smallest singular value, and K follows
 * from Appendix B. Pixels are scaled by 1/width first for conditioning.
 *
 * Radial distortion (k1, k2) then comes from the linear least squares of
 * Zhang's §3.3: (u − u0)(k1 r² + k2 r⁴) = ŭ − u with u the ideal pixel.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { estimateHomography } from '../pnp/homography.js';

export interface ZhangIntrinsics {
  fx: number;
  fy: number;
  cx: number;
  cy: number;
}

/** One planar view: target points (x, y) with z = 0 and their pixels (u, v), interleaved. */
export interface PlanarView {
  planeXY: Float64Array;
  pixels: Float64Array;
}

/** Returns null when the views do not determine K (fewer than 2 usable views, all parallel, …). */
export function zhangIntrinsics(views: readonly PlanarView[], imageWidth: number): ZhangIntrinsics | null {
  const s = 1 / imageWidth;
  const rows: number[][] = [];
  for (const v of views) {
    const px = Float64Array.from(v.pixels, (x) => x * s);
    const h = estimateHomography(v.planeXY, px);
    if (!h.ok) continue;
    const H = h.H;
    // Column j of H is (H[j], H[3 + j], H[6 + j]).
    const col = (j: number) => [H[j]!, H[3 + j]!, H[6 + j]!];
    const vij = (i: number, j: number): number[] => {
      const hi = col(i);
      const hj = col(j);
      return [
        hi[0]! * hj[0]!,
        hi[0]! * hj[1]! + hi[1]! * hj[0]!,
        hi[1]! * hj[1]!,
        hi[2]! * hj[0]! + hi[0]! * hj[2]!,
        hi[2]! * hj[1]! + hi[1]! * hj[2]!,
        hi[2]! * hj[2]!,
      ];
    };
    const v12 = vij(0, 1);
    const v11 = vij(0, 0);
    const v22 = vij(1, 1);
    const n12 = Math.hypot(...v12) || 1;
    const d = v11.map((x, k) => x - v22[k]!);
    const nd = Math.hypot(...d) || 1;
    rows.push(v12.map((x) => x / n12), d.map((x) => x / nd));
  }
  if (rows.length < 4) return null;
  // Zero skew: B12 = 0, weighted like one view's constraints.
  rows.push([0, 1, 0, 0, 0, 0]);
  const svd = new SingularValueDecomposition(new Matrix(rows), { autoTranspose: true });
  const V = svd.rightSingularVectors;
  const sv = svd.diagonal;
  let k = 0;
  for (let i = 1; i < sv.length; i++) if (sv[i]! < sv[k]!) k = i;
  let b = V.getColumn(k);
  // B is positive definite up to scale: make B11 > 0.
  if (b[0]! < 0) b = b.map((x) => -x);
  const [B11, B12, B22, B13, B23, B33] = b as [number, number, number, number, number, number];
  const den = B11 * B22 - B12 * B12;
  if (!(B11 > 0) || !(den > 0)) return null;
  const v0 = (B12 * B13 - B11 * B23) / den;
  const lambda = B33 - (B13 * B13 + v0 * (B12 * B13 - B11 * B23)) / B11;
  if (!(lambda > 0)) return null;
  const alpha = Math.sqrt(lambda / B11);
  const beta = Math.sqrt((lambda * B11) / den);
  const gamma = (-B12 * alpha * alpha * beta) / lambda;
  const u0 = (gamma * v0) / beta - (B13 * alpha * alpha) / lambda;
  const out = { fx: alpha / s, fy: beta / s, cx: u0 / s, cy: v0 / s };
  return Object.values(out).every(Number.isFinite) && out.fx > 0 && out.fy > 0 ? out : null;
}

/**
 * Radial k1, k2 by linear least squares (Zhang §3.3) given K and, per view,
 * the ideal normalised image points (x, y) = (X/Z, Y/Z) of the target points
 * under the current pose estimate, and the observed pixels.
 */
export function zhangRadial(K: ZhangIntrinsics, idealNormalised: readonly Float64Array[], pixels: readonly Float64Array[]): [number, number] {
  let a11 = 0, a12 = 0, a22 = 0, b1 = 0, b2 = 0;
  for (let v = 0; v < idealNormalised.length; v++) {
    const xy = idealNormalised[v]!;
    const uv = pixels[v]!;
    for (let i = 0; i < xy.length / 2; i++) {
      const x = xy[2 * i]!, y = xy[2 * i + 1]!;
      const r2 = x * x + y * y;
      const u = K.fx * x + K.cx;
      const w = K.fy * y + K.cy;
      const rowsA = [
        [(u - K.cx) * r2, (u - K.cx) * r2 * r2, uv[2 * i]! - u],
        [(w - K.cy) * r2, (w - K.cy) * r2 * r2, uv[2 * i + 1]! - w],
      ];
      for (const [p, q, rhs] of rowsA) {
        a11 += p! * p!;
        a12 += p! * q!;
        a22 += q! * q!;
        b1 += p! * rhs!;
        b2 += q! * rhs!;
      }
    }
  }
  const det = a11 * a22 - a12 * a12;
  if (!(Math.abs(det) > 0)) return [0, 0];
  return [(a22 * b1 - a12 * b2) / det, (a11 * b2 - a12 * b1) / det];
}
