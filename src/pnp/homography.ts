/**
 * Plane-to-plane homography by the normalised direct linear transform (DLT).
 *
 * Estimates H (3x3, row-major, ‖H‖_F = 1) with dst ~ H·src in homogeneous
 * coordinates, from n ≥ 4 point pairs. Each pair gives two rows of A h = 0:
 *   [ 0ᵀ, −w'sᵀ, y'sᵀ ] h = 0,   [ w'sᵀ, 0ᵀ, −x'sᵀ ] h = 0,   s = (x, y, 1), w' = 1,
 * and h is the right singular vector of A for the smallest singular value.
 *
 * Hartley normalisation (R. Hartley, "In defense of the eight-point
 * algorithm", IEEE TPAMI 1997): each point set is translated so that its
 * centroid is at the origin and scaled so that the mean distance to it is √2;
 * then H = T_dst⁻¹ · H_normalised · T_src.
 *
 * Degenerate input is reported as a status, not thrown: fewer than 4 pairs,
 * non-finite coordinates, (nearly) collinear points on either side, or a
 * null space of A of dimension > 1.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';

export type HomographyFailure = 'too_few_points' | 'size_mismatch' | 'non_finite' | 'collinear' | 'degenerate';

export type HomographyResult =
  | { ok: true; H: Float64Array; /** σ₉/σ₈ of the normalised design matrix (0 for exact data; to a few per cent). */ conditionRatio: number }
  | { ok: false; reason: HomographyFailure; message: string };

/**
 * Collinearity threshold on the normalised 2x2 scatter: λ_min/λ_max below this
 * means the points lie on a line to within ~1e-5 of their spread (common practice).
 */
const COLLINEAR_EIG_RATIO = 1e-10;
/** A second (near-)null direction of A: σ₈/σ₁ below this is treated as rank deficiency. */
const RANK_RATIO = 1e-12;

interface Normalisation {
  /** 3x3 row-major similarity T mapping raw to normalised points. */
  T: Float64Array;
  /** Normalised coordinates, interleaved xy. */
  pts: Float64Array;
  /** λ_min/λ_max of the normalised scatter matrix. */
  eigRatio: number;
}

function normalise(xy: ArrayLike<number>, n: number): Normalisation {
  let cx = 0, cy = 0;
  for (let i = 0; i < n; i++) {
    cx += xy[2 * i]!;
    cy += xy[2 * i + 1]!;
  }
  cx /= n;
  cy /= n;
  let meanDist = 0;
  for (let i = 0; i < n; i++) {
    // sqrt of the squares rather than Math.hypot: finite pixel coordinates cannot overflow, and hypot is several times slower.
    const dx = xy[2 * i]! - cx, dy = xy[2 * i + 1]! - cy;
    meanDist += Math.sqrt(dx * dx + dy * dy);
  }
  meanDist /= n;
  const s = meanDist > 0 ? Math.SQRT2 / meanDist : 1;
  const pts = new Float64Array(2 * n);
  let sxx = 0, sxy = 0, syy = 0;
  for (let i = 0; i < n; i++) {
    const x = s * (xy[2 * i]! - cx);
    const y = s * (xy[2 * i + 1]! - cy);
    pts[2 * i] = x;
    pts[2 * i + 1] = y;
    sxx += x * x;
    sxy += x * y;
    syy += y * y;
  }
  // Eigenvalues of the 2x2 scatter [[sxx, sxy], [sxy, syy]].
  const tr = sxx + syy;
  const disc = Math.sqrt(Math.max(0, (sxx - syy) * (sxx - syy) + 4 * sxy * sxy));
  const lMax = 0.5 * (tr + disc);
  const lMin = 0.5 * (tr - disc);
  const T = Float64Array.of(s, 0, -s * cx, 0, s, -s * cy, 0, 0, 1);
  return { T, pts, eigRatio: lMax > 0 ? Math.max(lMin, 0) / lMax : 0 };
}

/**
 * estimateHomography(src, dst) → H with dst_i ~ H·src_i.
 * src, dst: interleaved xy (length 2n each). H: row-major 3x3 with ‖H‖_F = 1
 * and H[8] ≥ 0 when H[8] ≠ 0.
 */
export function estimateHomography(src: ArrayLike<number>, dst: ArrayLike<number>): HomographyResult {
  if (src.length !== dst.length || src.length % 2 !== 0) {
    return { ok: false, reason: 'size_mismatch', message: `src has ${src.length} and dst ${dst.length} coordinates; both must hold the same number of xy pairs` };
  }
  const n = src.length / 2;
  if (n < 4) return { ok: false, reason: 'too_few_points', message: `a homography needs at least 4 point pairs, got ${n}` };
  for (let i = 0; i < 2 * n; i++) {
    if (!Number.isFinite(src[i]!) || !Number.isFinite(dst[i]!)) {
      return { ok: false, reason: 'non_finite', message: `point pair ${Math.floor(i / 2)} has a non-finite coordinate` };
    }
  }
  const ns = normalise(src, n);
  const nd = normalise(dst, n);
  if (ns.eigRatio < COLLINEAR_EIG_RATIO || nd.eigRatio < COLLINEAR_EIG_RATIO) {
    const side = ns.eigRatio < COLLINEAR_EIG_RATIO ? 'source' : 'destination';
    return { ok: false, reason: 'collinear', message: `the ${side} points are collinear (scatter eigenvalue ratio ${Math.min(ns.eigRatio, nd.eigRatio).toExponential(2)}); a homography needs 4 points with no 3 on a line` };
  }
  // With 4 pairs A is 8x9; a zero row makes it square so that the SVD returns all of V.
  const rows = Math.max(2 * n, 9);
  // A stored by columns (column c at c·rows), so that the Householder
  // reflections below run over contiguous memory.
  if (designScratch.length < rows * 9) designScratch = new Float64Array(rows * 9);
  const a = designScratch;
  a.fill(0, 0, rows * 9);
  for (let i = 0; i < n; i++) {
    const x = ns.pts[2 * i]!, y = ns.pts[2 * i + 1]!;
    const xp = nd.pts[2 * i]!, yp = nd.pts[2 * i + 1]!;
    const r0 = 2 * i, r1 = r0 + 1;
    a[3 * rows + r0] = -x; a[4 * rows + r0] = -y; a[5 * rows + r0] = -1;
    a[6 * rows + r0] = yp * x; a[7 * rows + r0] = yp * y; a[8 * rows + r0] = yp;
    a[r1] = x; a[rows + r1] = y; a[2 * rows + r1] = 1;
    a[6 * rows + r1] = -xp * x; a[7 * rows + r1] = -xp * y; a[8 * rows + r1] = -xp;
  }
  // A's singular values and right singular vectors are those of its 9x9 triangular factor.
  const R = householderRByColumns(a, rows, 9);
  const fast = nullVectorByInverseIteration(R);
  let Hn: Float64Array;
  let conditionRatio: number;
  if (fast) {
    Hn = fast.v;
    conditionRatio = fast.sigma9 / fast.sigma8;
  } else {
    const A = new Matrix(9, 9);
    for (let i = 0; i < 9; i++) for (let j = 0; j < 9; j++) A.set(i, j, R[i * 9 + j]!);
    const svd = new SingularValueDecomposition(A, { autoTranspose: false });
    const sv = svd.diagonal;
    // ml-matrix returns singular values in descending order; find the smallest explicitly.
    let iMin = 0;
    for (let i = 1; i < 9; i++) if (sv[i]! < sv[iMin]!) iMin = i;
    const sorted = [...sv].sort((a, b) => b - a);
    if (sorted[7]! <= RANK_RATIO * sorted[0]!) {
      return { ok: false, reason: 'degenerate', message: `the point configuration does not determine a unique homography (second smallest singular value ${sorted[7]!.toExponential(2)} relative to ${sorted[0]!.toExponential(2)})` };
    }
    const V = svd.rightSingularVectors;
    Hn = new Float64Array(9);
    for (let k = 0; k < 9; k++) Hn[k] = V.get(k, iMin);
    conditionRatio = sorted[8]! / sorted[7]!;
  }
  // H = T_dst⁻¹ · Hn · T_src.
  const Td = nd.T;
  const sd = Td[0]!;
  const TdInv = Float64Array.of(1 / sd, 0, -Td[2]! / sd, 0, 1 / sd, -Td[5]! / sd, 0, 0, 1);
  const H = mul3(mul3(TdInv, Hn), ns.T);
  let norm = 0;
  for (let k = 0; k < 9; k++) norm += H[k]! * H[k]!;
  norm = Math.sqrt(norm);
  const sign = H[8]! < 0 ? -1 : 1;
  for (let k = 0; k < 9; k++) H[k] = (sign * H[k]!) / norm;
  return { ok: true, H, conditionRatio };
}

/** Applies H to (x, y): returns (x', y') = dehomogenised H·(x, y, 1). */
export function applyHomography(H: ArrayLike<number>, x: number, y: number, out: Float64Array = new Float64Array(2)): Float64Array {
  const w = H[6]! * x + H[7]! * y + H[8]!;
  out[0] = (H[0]! * x + H[1]! * y + H[2]!) / w;
  out[1] = (H[3]! * x + H[4]! * y + H[5]!) / w;
  return out;
}

let designScratch = new Float64Array(0);

/**
 * Triangular factor R (n x n, row-major, upper) of the QR factorisation of
 * the m x n matrix A given by columns (column j at A[j·m …], overwritten), by
 * Householder reflections: the same arithmetic as linalg/small.ts
 * householderR (RᵀR = AᵀA, no squaring of the condition number), with every
 * inner loop over contiguous memory.
 */
function householderRByColumns(A: Float64Array, m: number, n: number): Float64Array {
  for (let k = 0; k < n; k++) {
    const ck = k * m;
    let norm = 0;
    for (let i = k; i < m; i++) norm += A[ck + i]! * A[ck + i]!;
    norm = Math.sqrt(norm);
    if (norm === 0) continue;
    const alpha = A[ck + k]! > 0 ? -norm : norm;
    // v = x − alpha e_k, stored in column k from row k on (v_k in place of A[k][k]).
    const vk = A[ck + k]! - alpha;
    A[ck + k] = vk;
    let vnorm2 = vk * vk;
    for (let i = k + 1; i < m; i++) vnorm2 += A[ck + i]! * A[ck + i]!;
    if (vnorm2 === 0) {
      A[ck + k] = alpha;
      continue;
    }
    for (let j = k + 1; j < n; j++) {
      const cj = j * m;
      let dot = 0;
      for (let i = k; i < m; i++) dot += A[ck + i]! * A[cj + i]!;
      const f = (2 * dot) / vnorm2;
      for (let i = k; i < m; i++) A[cj + i] = A[cj + i]! - f * A[ck + i]!;
    }
    A[ck + k] = alpha;
  }
  const R = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = i; j < n; j++) R[i * n + j] = A[j * m + i]!;
  return R;
}

/**
 * Fast path for the right singular vector of the smallest singular value of
 * the 9x9 upper-triangular R: inverse iteration on RᵀR through two
 * triangular solves per step, x ← R⁻¹R⁻ᵀx / ‖·‖ (Golub & Van Loan, Matrix
 * Computations, §7.6.1), which converges at the rate (σ₉/σ₈)² without
 * forming RᵀR. A pivot below 1e-15·‖R‖_F (exact data, σ₉ ≈ 0) is replaced by
 * that value, which only speeds the iteration up. σ₈ is then estimated by the
 * same iteration restricted to the complement of v₉: ‖R x‖ for the unit x
 * is an upper bound that decreases towards σ₈ (components along σ_j decay as
 * (σ₈/σ_j)^2k); at most 12 steps, stopping when it changes by less than
 * 1e-3 relative. That is ample for the rank test (any direction with
 * σ_j ≥ 1e-6‖R‖ has decayed when σ₈ is at the 1e-12 rank threshold) and makes
 * conditionRatio accurate to a few per cent. Returns null, so that the caller falls back to a full SVD, when
 * σ₈ < 1e-6·‖R‖_F (near rank deficiency: the degenerate cases) or either
 * iteration fails to settle.
 */
function nullVectorByInverseIteration(R: Float64Array): { v: Float64Array; sigma8: number; sigma9: number } | null {
  let fro2 = 0;
  for (let k = 0; k < 81; k++) fro2 += R[k]! * R[k]!;
  const fro = Math.sqrt(fro2);
  if (!(fro > 0) || !Number.isFinite(fro)) return null;
  const d = new Float64Array(9);
  const floor = 1e-15 * fro;
  for (let i = 0; i < 9; i++) {
    const r = R[i * 10]!;
    d[i] = Math.abs(r) >= floor ? r : r < 0 ? -floor : floor;
  }
  const y = new Float64Array(9);
  const z = new Float64Array(9);
  // z = R⁻¹ R⁻ᵀ x
  const step = (x: Float64Array): void => {
    for (let i = 0; i < 9; i++) {
      let s = x[i]!;
      for (let k = 0; k < i; k++) s -= R[k * 9 + i]! * y[k]!;
      y[i] = s / d[i]!;
    }
    for (let i = 8; i >= 0; i--) {
      let s = y[i]!;
      for (let k = i + 1; k < 9; k++) s -= R[i * 9 + k]! * z[k]!;
      z[i] = s / d[i]!;
    }
  };
  const normR = (x: Float64Array): number => {
    let s2 = 0;
    for (let i = 0; i < 9; i++) {
      let s = 0;
      for (let k = i; k < 9; k++) s += R[i * 9 + k]! * x[k]!;
      s2 += s * s;
    }
    return Math.sqrt(s2);
  };
  const v = new Float64Array(9).fill(1 / 3);
  let converged = false;
  for (let it = 0; it < 200 && !converged; it++) {
    step(v);
    let n2 = 0;
    for (let i = 0; i < 9; i++) n2 += z[i]! * z[i]!;
    const n = Math.sqrt(n2);
    if (!(n > 0) || !Number.isFinite(n)) return null;
    // Change of direction (sign-insensitive): ‖z/n − sign·v‖∞.
    let dot = 0;
    for (let i = 0; i < 9; i++) dot += z[i]! * v[i]!;
    const sign = dot < 0 ? -1 : 1;
    let change = 0;
    for (let i = 0; i < 9; i++) {
      const vi = (sign * z[i]!) / n;
      change = Math.max(change, Math.abs(vi - v[i]!));
      v[i] = vi;
    }
    converged = change <= 1e-14;
  }
  if (!converged) return null;
  const sigma9 = normR(v);
  // σ₈: iterate in the complement of v.
  const w = new Float64Array(9);
  for (let i = 0; i < 9; i++) w[i] = i % 2 === 0 ? 1 : -1;
  let sigma8 = NaN;
  let settled = false;
  for (let it = 0; it < 12 && !settled; it++) {
    let p = 0;
    for (let i = 0; i < 9; i++) p += w[i]! * v[i]!;
    for (let i = 0; i < 9; i++) w[i] = w[i]! - p * v[i]!;
    let n2 = 0;
    for (let i = 0; i < 9; i++) n2 += w[i]! * w[i]!;
    const n = Math.sqrt(n2);
    if (!(n > 0) || !Number.isFinite(n)) return null;
    for (let i = 0; i < 9; i++) w[i] = w[i]! / n;
    const s8 = normR(w);
    settled = Math.abs(s8 - sigma8) <= 1e-3 * s8;
    sigma8 = s8;
    step(w);
    w.set(z);
  }
  if (!(sigma8 >= 1e-6 * fro)) return null;
  return { v, sigma8, sigma9 };
}

function mul3(A: ArrayLike<number>, B: ArrayLike<number>): Float64Array {
  const C = new Float64Array(9);
  for (let i = 0; i < 3; i++)
    for (let j = 0; j < 3; j++) C[i * 3 + j] = A[i * 3]! * B[j]! + A[i * 3 + 1]! * B[3 + j]! + A[i * 3 + 2]! * B[6 + j]!;
  return C;
}
