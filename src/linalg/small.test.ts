import { CholeskyDecomposition, determinant, inverse as mlInverse, Matrix, SingularValueDecomposition } from 'ml-matrix';
import { describe, expect, it, test } from 'vitest';
import { expectMatrixClose, gaussian, rng } from '../testing/numeric.js';
import {
  choleskyInPlace,
  choleskySolveInPlace,
  cross,
  dot3,
  householderR,
  mat3Det,
  mat3Mul,
  mat3MulVec,
  mat3Transpose,
  mat3TransposeMulVec,
  matMul,
  matMulT,
  matTMul,
  norm3,
  skew,
  spdInverse,
} from './small.js';

// Reference: the ml-matrix library (general dense matrices, its own Cholesky and inverse).
const u = rng(2024);
const rand = (n: number) => Float64Array.from({ length: n }, () => gaussian(u));
const toMl = (a: ArrayLike<number>, r: number, c: number) => new Matrix(Array.from({ length: r }, (_, i) => Array.from({ length: c }, (_, j) => a[i * c + j]!)));
const flat = (m: Matrix) => Float64Array.from(m.to1DArray());
/** Random SPD matrix Bᵀ B + n I (n x n). */
function randomSpd(n: number): Float64Array {
  const B = toMl(rand(n * n), n, n);
  return flat(B.transpose().mmul(B).add(Matrix.eye(n).mul(n)));
}

describe('3x3 kernels vs ml-matrix', () => {
  it('mat3Mul, mat3Transpose, mat3MulVec, mat3TransposeMulVec, mat3Det', () => {
    for (let k = 0; k < 100; k++) {
      const A = rand(9), B = rand(9), v = rand(3);
      const mA = toMl(A, 3, 3);
      expectMatrixClose(mat3Mul(new Float64Array(9), A, B), flat(mA.mmul(toMl(B, 3, 3))), { abs: 1e-13 }, 'mat3Mul');
      expectMatrixClose(mat3Transpose(new Float64Array(9), A), flat(mA.transpose()), { abs: 0 }, 'mat3Transpose');
      const At = Float64Array.from(A);
      mat3Transpose(At, At);
      expectMatrixClose(At, flat(mA.transpose()), { abs: 0 }, 'mat3Transpose in place');
      expectMatrixClose(mat3MulVec(new Float64Array(3), A, v), flat(mA.mmul(toMl(v, 3, 1))), { abs: 1e-13 }, 'mat3MulVec');
      expectMatrixClose(mat3TransposeMulVec(new Float64Array(3), A, v), flat(mA.transpose().mmul(toMl(v, 3, 1))), { abs: 1e-13 }, 'mat3TransposeMulVec');
      const vv = Float64Array.from(v);
      mat3MulVec(vv, A, vv);
      expectMatrixClose(vv, flat(mA.mmul(toMl(v, 3, 1))), { abs: 1e-13 }, 'mat3MulVec aliasing v');
      const d = determinant(mA);
      expect(Math.abs(mat3Det(A) - d)).toBeLessThan(1e-12);
    }
  });

  it('skew, cross, dot3, norm3: [a]× b = a × b', () => {
    for (let k = 0; k < 50; k++) {
      const a = rand(3), b = rand(3);
      const c = cross(new Float64Array(3), a, b);
      expectMatrixClose(mat3MulVec(new Float64Array(3), skew(new Float64Array(9), a), b), c, { abs: 1e-14 }, 'skew');
      expect(Math.abs(dot3(c, a))).toBeLessThan(1e-13);
      expect(Math.abs(norm3(a) - toMl(a, 3, 1).norm())).toBeLessThan(1e-14);
      expect(Math.abs(dot3(a, b) - toMl(a, 1, 3).mmul(toMl(b, 3, 1)).get(0, 0))).toBeLessThan(1e-13);
    }
  });
});

describe('general products vs ml-matrix', () => {
  it.each([
    [1, 1, 1],
    [2, 3, 4],
    [6, 6, 6],
    [7, 2, 9],
    [3, 12, 1],
  ])('matMul / matTMul / matMulT with shapes n=%i k=%i m=%i', (n, k, m) => {
    const A = rand(n * k), B = rand(k * m), At = rand(k * n), Bt = rand(m * k);
    expectMatrixClose(matMul(new Float64Array(n * m), A, B, n, k, m), flat(toMl(A, n, k).mmul(toMl(B, k, m))), { abs: 1e-12 }, 'matMul');
    // matTMul writes out = Aᵀ B with A (k x n); start from garbage to check it clears out.
    const out = Float64Array.from({ length: n * m }, () => 99);
    expectMatrixClose(matTMul(out, At, B, k, n, m), flat(toMl(At, k, n).transpose().mmul(toMl(B, k, m))), { abs: 1e-12 }, 'matTMul');
    expectMatrixClose(matMulT(new Float64Array(n * m), A, Bt, n, k, m), flat(toMl(A, n, k).mmul(toMl(Bt, m, k).transpose())), { abs: 1e-12 }, 'matMulT');
  });
});

describe('Cholesky and SPD inverse vs ml-matrix', () => {
  it.each([1, 2, 3, 6, 9, 15])('n = %i: L matches, solve matches, inverse matches', (n) => {
    const A = randomSpd(n);
    const L = Float64Array.from(A);
    expect(choleskyInPlace(L, n)).toBe(-1);
    const ref = new CholeskyDecomposition(toMl(A, n, n));
    expect(ref.isPositiveDefinite()).toBe(true);
    const Lref = flat(ref.lowerTriangularMatrix);
    const Llow = Float64Array.from(L, (x, idx) => (idx % n <= Math.floor(idx / n) ? x : 0));
    expectMatrixClose(Llow, Lref, { abs: 1e-12, rel: 1e-12 }, 'L');
    const b = rand(n);
    const x = choleskySolveInPlace(L, n, Float64Array.from(b));
    expectMatrixClose(x, flat(ref.solve(toMl(b, n, 1))), { abs: 1e-12, rel: 1e-12 }, 'solve');
    const inv = spdInverse(A, n)!;
    expectMatrixClose(inv, flat(mlInverse(toMl(A, n, n))), { abs: 1e-12, rel: 1e-10 }, 'spdInverse');
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) expect(inv[i * n + j]).toBe(inv[j * n + i]);
  });

  it('reports the failing column of an indefinite matrix and spdInverse returns null', () => {
    // diag(4, 1, -1) with couplings: the third pivot is not positive.
    const A = Float64Array.from([4, 2, 0, 2, 2, 0, 0, 0, -1]);
    expect(choleskyInPlace(Float64Array.from(A), 3)).toBe(2);
    expect(new CholeskyDecomposition(toMl(A, 3, 3)).isPositiveDefinite()).toBe(false);
    expect(spdInverse(A, 3)).toBeNull();
    // Rank-deficient PSD matrix: the zero pivot is caught (column 1).
    expect(choleskyInPlace(Float64Array.from([1, 1, 1, 1]), 2)).toBe(1);
  });
});

describe('householderR', () => {
  test('RᵀR equals AᵀA and R has the singular values of A (ml-matrix reference)', () => {
    const m = 40;
    const n = 9;
    const A = Float64Array.from({ length: m * n }, () => u() * 2 - 1);
    const M = new Matrix(Array.from({ length: m }, (_, i) => Array.from(A.subarray(i * n, i * n + n))));
    const R = householderR(Float64Array.from(A), m, n);
    const RtR = new Float64Array(n * n);
    matTMul(RtR, R, R, n, n, n);
    const AtA = M.transpose().mmul(M).to1DArray();
    expectMatrixClose(RtR, AtA, { rel: 1e-13 }, 'RᵀR');
    const sA = new SingularValueDecomposition(M).diagonal;
    const sR = new SingularValueDecomposition(new Matrix(Array.from({ length: n }, (_, i) => Array.from(R.subarray(i * n, i * n + n))))).diagonal;
    expectMatrixClose(sR, sA, { rel: 1e-12 }, 'singular values');
  });
});
