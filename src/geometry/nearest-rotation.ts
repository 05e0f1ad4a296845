import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import type { Mat3 } from '../linalg/small.js';

/**
 * The rotation closest to M in the Frobenius norm (orthogonal Procrustes):
 * R = U diag(1, 1, det(U Vᵀ)) Vᵀ with M = U Σ Vᵀ. M is 3x3 row-major.
 */
export function nearestRotation(M: ArrayLike<number>, out: Mat3 = new Float64Array(9)): Mat3 {
  const m = new Matrix([
    [M[0]!, M[1]!, M[2]!],
    [M[3]!, M[4]!, M[5]!],
    [M[6]!, M[7]!, M[8]!],
  ]);
  const svd = new SingularValueDecomposition(m, { autoTranspose: false });
  const U = svd.leftSingularVectors;
  const V = svd.rightSingularVectors;
  let R = U.mmul(V.transpose());
  const d = det3(R);
  if (d < 0) {
    const D = Matrix.diag([1, 1, -1]);
    R = U.mmul(D).mmul(V.transpose());
  }
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) out[i * 3 + j] = R.get(i, j);
  return out;
}

function det3(R: Matrix): number {
  const a = R.to1DArray();
  return a[0]! * (a[4]! * a[8]! - a[5]! * a[7]!) - a[1]! * (a[3]! * a[8]! - a[5]! * a[6]!) + a[2]! * (a[3]! * a[7]! - a[4]! * a[6]!);
}
