import { describe, expect, test } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { symmetricPsd } from './psd.js';
import { gaussian, rng } from '../testing/numeric.js';

/** Random SPD-ish covariance Q diag(d) Qᵀ with Q from a Gram–Schmidt of Gaussian columns. */
function covarianceWithEigenvalues(d: number[], seed: number): Float64Array {
  const n = d.length;
  const u = rng(seed);
  const Q: number[][] = [];
  for (let k = 0; k < n; k++) {
    const v = Array.from({ length: n }, () => gaussian(u));
    for (const q of Q) {
      const dot = v.reduce((s, x, i) => s + x * q[i]!, 0);
      for (let i = 0; i < n; i++) v[i]! -= dot * q[i]!;
    }
    const nv = Math.hypot(...v);
    Q.push(v.map((x) => x / nv));
  }
  const A = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    let s = 0;
    for (let k = 0; k < n; k++) s += Q[k]![i]! * d[k]! * Q[k]![j]!;
    A[i * n + j] = s;
  }
  return A;
}

function eigenvalues(A: Float64Array, n: number): number[] {
  const rows = Array.from({ length: n }, (_, i) => Array.from(A.subarray(i * n, (i + 1) * n)));
  return new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true }).realEigenvalues;
}

describe('symmetricPsd', () => {
  test('a symmetric positive definite matrix passes through bit for bit', () => {
    const A = covarianceWithEigenvalues([1e-6, 2e-6, 3e-7, 4e-8, 1e-9, 5e-6], 1);
    for (let i = 0; i < 6; i++) for (let j = 0; j < i; j++) A[i * 6 + j] = A[j * 6 + i]!;
    const r = symmetricPsd(A, 6);
    expect(r.ok).toBe(true);
    if (r.ok) {
      expect(Array.from(r.matrix)).toEqual(Array.from(A));
      expect(r.clipped).toBe(0);
    }
  });

  test('the zero matrix (the reference camera) is accepted', () => {
    const r = symmetricPsd(new Float64Array(36), 6);
    expect(r.ok && Array.from(r.matrix).every((v) => v === 0)).toBe(true);
  });

  test('round-off asymmetry is averaged away', () => {
    const A = covarianceWithEigenvalues([1, 2, 3], 2);
    A[1] = A[1]! * (1 + 1e-12);
    const r = symmetricPsd(A, 3);
    expect(r.ok).toBe(true);
    if (r.ok) for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) expect(r.matrix[i * 3 + j]).toBe(r.matrix[j * 3 + i]);
  });

  test('tiny negative eigenvalues from round-off are clipped to zero', () => {
    const A = covarianceWithEigenvalues([1e-4, 3e-5, 2e-6, -3e-18, 7e-7, -1e-17], 3);
    const r = symmetricPsd(A, 6);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.clipped).toBeGreaterThan(0);
    const ev = eigenvalues(r.matrix, 6);
    expect(Math.min(...ev)).toBeGreaterThan(-1e-15 * 1e-4);
    for (let k = 0; k < 36; k++) expect(Math.abs(r.matrix[k]! - A[k]!)).toBeLessThan(1e-15);
  });

  test('a clearly negative eigenvalue is an error, reported with the closed-form 2x2 value', () => {
    // Handbook: eigenvalues of [[a, b], [b, d]] are (a+d)/2 ± sqrt(((a−d)/2)² + b²); here 3 and −1.
    const r = symmetricPsd([1, 2, 2, 1], 2);
    expect(r.ok).toBe(false);
    if (r.ok) return;
    expect(r.reason).toBe('negative_eigenvalue');
    expect(r.minEigenvalue).toBeCloseTo(-1, 12);
    expect(r.maxEigenvalue).toBeCloseTo(3, 12);
  });

  test('negative beyond round-off in a 6x6 covariance is an error', () => {
    const r = symmetricPsd(covarianceWithEigenvalues([1e-4, 3e-5, 2e-6, -1e-10, 7e-7, 1e-6], 4), 6);
    expect(r.ok ? 'ok' : r.reason).toBe('negative_eigenvalue');
  });

  test('NaN and Inf entries are errors naming the entry', () => {
    const A = new Float64Array(36);
    A[8] = NaN;
    const r = symmetricPsd(A, 6);
    expect(r.ok ? 'ok' : r.reason).toBe('not_finite');
    if (!r.ok) expect(r.message).toContain('(1, 2)');
    A[8] = Infinity;
    expect(symmetricPsd(A, 6).ok).toBe(false);
  });

  test('a matrix that is not symmetric is an error, not silently averaged', () => {
    const r = symmetricPsd([2, 1, 0, 2], 2);
    expect(r.ok ? 'ok' : r.reason).toBe('not_symmetric');
  });
});
