/**
 * Covariance hygiene before a matrix leaves the program: symmetric and
 * positive semi-definite, or a status saying why not.
 *
 * Given a row-major n×n matrix A:
 *   1. every entry must be finite;
 *   2. asymmetry  a = max|A_ij − A_ji| / max|A_ij|  must be ≤ symmetryTolerance
 *      (a covariance assembled from S⁻¹ is symmetric up to round-off);
 *   3. S = (A + Aᵀ)/2 = V Λ Vᵀ (symmetric eigen-decomposition, ml-matrix);
 *      eigenvalues with −negativeTolerance·λ_max ≤ λ < 0 are round-off and
 *      are clipped to 0, giving V max(Λ, 0) Vᵀ; anything more negative is
 *      reported as 'negative_eigenvalue'.
 * When no eigenvalue needs clipping, the symmetrised S itself is returned
 * (no reconstruction, so well-formed inputs keep their digits).
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

export interface PsdOptions {
  /** Largest accepted relative asymmetry max|A−Aᵀ|/max|A|. Default 1e-8. */
  symmetryTolerance?: number;
  /** Negative eigenvalues down to −negativeTolerance·λ_max are clipped as round-off. Default 1e-9. */
  negativeTolerance?: number;
}

export type PsdResult =
  | {
      ok: true;
      /** Symmetric PSD matrix, row-major n×n. */
      matrix: Float64Array;
      /** Number of eigenvalues clipped from tiny negative values to 0. */
      clipped: number;
      minEigenvalue: number;
      maxEigenvalue: number;
      asymmetry: number;
    }
  | {
      ok: false;
      reason: 'not_finite' | 'not_symmetric' | 'negative_eigenvalue';
      message: string;
      minEigenvalue: number;
      maxEigenvalue: number;
      asymmetry: number;
    };

/** Symmetrises A and checks / clips its eigenvalues (see the file comment). */
export function symmetricPsd(A: ArrayLike<number>, n: number, opts: PsdOptions = {}): PsdResult {
  const symTol = opts.symmetryTolerance ?? 1e-8;
  const negTol = opts.negativeTolerance ?? 1e-9;
  if (A.length !== n * n) throw new RangeError(`symmetricPsd: expected ${n}x${n} = ${n * n} entries, received ${A.length}`);
  let maxAbs = 0;
  for (let k = 0; k < n * n; k++) {
    const v = A[k]!;
    if (!Number.isFinite(v)) {
      return { ok: false, reason: 'not_finite', message: `entry (${Math.floor(k / n)}, ${k % n}) is ${v}`, minEigenvalue: NaN, maxEigenvalue: NaN, asymmetry: NaN };
    }
    maxAbs = Math.max(maxAbs, Math.abs(v));
  }
  const S = new Float64Array(n * n);
  let asym = 0;
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      S[i * n + j] = 0.5 * (A[i * n + j]! + A[j * n + i]!);
      asym = Math.max(asym, Math.abs(A[i * n + j]! - A[j * n + i]!));
    }
  }
  const asymmetry = maxAbs > 0 ? asym / maxAbs : 0;
  if (maxAbs === 0) return { ok: true, matrix: S, clipped: 0, minEigenvalue: 0, maxEigenvalue: 0, asymmetry: 0 };
  if (asymmetry > symTol) {
    return {
      ok: false,
      reason: 'not_symmetric',
      message: `relative asymmetry ${asymmetry.toExponential(2)} exceeds ${symTol}`,
      minEigenvalue: NaN,
      maxEigenvalue: NaN,
      asymmetry,
    };
  }
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) rows.push(Array.from(S.subarray(i * n, (i + 1) * n)));
  const eig = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true });
  const ev = eig.realEigenvalues;
  let lmin = Infinity;
  let lmax = -Infinity;
  for (const v of ev) {
    lmin = Math.min(lmin, v);
    lmax = Math.max(lmax, v);
  }
  if (!(lmax > 0) || lmin < -negTol * lmax) {
    return {
      ok: false,
      reason: 'negative_eigenvalue',
      message: `smallest eigenvalue ${lmin.toExponential(3)} is negative beyond round-off (largest ${lmax.toExponential(3)})`,
      minEigenvalue: lmin,
      maxEigenvalue: lmax,
      asymmetry,
    };
  }
  const clipped = ev.filter((v) => v < 0).length;
  if (clipped === 0) return { ok: true, matrix: S, clipped: 0, minEigenvalue: lmin, maxEigenvalue: lmax, asymmetry };
  const V = eig.eigenvectorMatrix;
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = i; j < n; j++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += V.get(i, k) * Math.max(ev[k]!, 0) * V.get(j, k);
      out[i * n + j] = s;
      out[j * n + i] = s;
    }
  }
  return { ok: true, matrix: out, clipped, minEigenvalue: lmin, maxEigenvalue: lmax, asymmetry };
}
