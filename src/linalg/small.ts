/**
 * Fixed-size dense kernels on row-major Float64Array: the hot inner loops
 * (3x3 rotations, 6x6 pose blocks). General-size work goes through ml-matrix;
 * these exist only because allocation-free fixed-size code is much faster
 * there, and each is tested against ml-matrix.
 *
 * Storage: an n x m matrix is a Float64Array of length n*m, row-major
 * (element (i, j) at index i*m + j). Every function writes into an `out`
 * buffer and returns it; `out` may not alias an input unless stated.
 */

export type Vec3 = Float64Array;
export type Mat3 = Float64Array;

export function vec3(x = 0, y = 0, z = 0): Vec3 {
  const v = new Float64Array(3);
  v[0] = x;
  v[1] = y;
  v[2] = z;
  return v;
}

export function mat3Identity(out: Mat3 = new Float64Array(9)): Mat3 {
  out.fill(0);
  out[0] = 1;
  out[4] = 1;
  out[8] = 1;
  return out;
}

/** out = A * B (3x3). */
export function mat3Mul(out: Mat3, A: ArrayLike<number>, B: ArrayLike<number>): Mat3 {
  const a0 = A[0]!, a1 = A[1]!, a2 = A[2]!, a3 = A[3]!, a4 = A[4]!, a5 = A[5]!, a6 = A[6]!, a7 = A[7]!, a8 = A[8]!;
  const b0 = B[0]!, b1 = B[1]!, b2 = B[2]!, b3 = B[3]!, b4 = B[4]!, b5 = B[5]!, b6 = B[6]!, b7 = B[7]!, b8 = B[8]!;
  out[0] = a0 * b0 + a1 * b3 + a2 * b6;
  out[1] = a0 * b1 + a1 * b4 + a2 * b7;
  out[2] = a0 * b2 + a1 * b5 + a2 * b8;
  out[3] = a3 * b0 + a4 * b3 + a5 * b6;
  out[4] = a3 * b1 + a4 * b4 + a5 * b7;
  out[5] = a3 * b2 + a4 * b5 + a5 * b8;
  out[6] = a6 * b0 + a7 * b3 + a8 * b6;
  out[7] = a6 * b1 + a7 * b4 + a8 * b7;
  out[8] = a6 * b2 + a7 * b5 + a8 * b8;
  return out;
}

/** out = Aᵀ (3x3); out may alias A. */
export function mat3Transpose(out: Mat3, A: ArrayLike<number>): Mat3 {
  const a1 = A[1]!, a2 = A[2]!, a3 = A[3]!, a5 = A[5]!, a6 = A[6]!, a7 = A[7]!;
  out[0] = A[0]!;
  out[4] = A[4]!;
  out[8] = A[8]!;
  out[1] = a3;
  out[3] = a1;
  out[2] = a6;
  out[6] = a2;
  out[5] = a7;
  out[7] = a5;
  return out;
}

/** out = A * v (3x3 times 3-vector); out may alias v. */
export function mat3MulVec(out: Vec3, A: ArrayLike<number>, v: ArrayLike<number>): Vec3 {
  const x = v[0]!, y = v[1]!, z = v[2]!;
  out[0] = A[0]! * x + A[1]! * y + A[2]! * z;
  out[1] = A[3]! * x + A[4]! * y + A[5]! * z;
  out[2] = A[6]! * x + A[7]! * y + A[8]! * z;
  return out;
}

/** out = Aᵀ * v (3x3); out may alias v. */
export function mat3TransposeMulVec(out: Vec3, A: ArrayLike<number>, v: ArrayLike<number>): Vec3 {
  const x = v[0]!, y = v[1]!, z = v[2]!;
  out[0] = A[0]! * x + A[3]! * y + A[6]! * z;
  out[1] = A[1]! * x + A[4]! * y + A[7]! * z;
  out[2] = A[2]! * x + A[5]! * y + A[8]! * z;
  return out;
}

export function mat3Det(A: ArrayLike<number>): number {
  return (
    A[0]! * (A[4]! * A[8]! - A[5]! * A[7]!) -
    A[1]! * (A[3]! * A[8]! - A[5]! * A[6]!) +
    A[2]! * (A[3]! * A[7]! - A[4]! * A[6]!)
  );
}

/** Skew-symmetric (hat) matrix [v]× with [v]× w = v × w. */
export function skew(out: Mat3, v: ArrayLike<number>): Mat3 {
  const x = v[0]!, y = v[1]!, z = v[2]!;
  out[0] = 0;
  out[1] = -z;
  out[2] = y;
  out[3] = z;
  out[4] = 0;
  out[5] = -x;
  out[6] = -y;
  out[7] = x;
  out[8] = 0;
  return out;
}

export function cross(out: Vec3, a: ArrayLike<number>, b: ArrayLike<number>): Vec3 {
  const ax = a[0]!, ay = a[1]!, az = a[2]!, bx = b[0]!, by = b[1]!, bz = b[2]!;
  out[0] = ay * bz - az * by;
  out[1] = az * bx - ax * bz;
  out[2] = ax * by - ay * bx;
  return out;
}

export function dot3(a: ArrayLike<number>, b: ArrayLike<number>): number {
  return a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!;
}

export function norm3(a: ArrayLike<number>): number {
  return Math.sqrt(a[0]! * a[0]! + a[1]! * a[1]! + a[2]! * a[2]!);
}

/** out = A * B for general row-major A (n x k) and B (k x m). */
export function matMul(out: Float64Array, A: ArrayLike<number>, B: ArrayLike<number>, n: number, k: number, m: number): Float64Array {
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < m; j++) {
      let s = 0;
      for (let l = 0; l < k; l++) s += A[i * k + l]! * B[l * m + j]!;
      out[i * m + j] = s;
    }
  }
  return out;
}

/** out = Aᵀ * B for row-major A (k x n) and B (k x m); out is n x m. */
export function matTMul(out: Float64Array, A: ArrayLike<number>, B: ArrayLike<number>, k: number, n: number, m: number): Float64Array {
  out.fill(0, 0, n * m);
  for (let l = 0; l < k; l++) {
    for (let i = 0; i < n; i++) {
      const a = A[l * n + i]!;
      if (a === 0) continue;
      for (let j = 0; j < m; j++) out[i * m + j] += a * B[l * m + j]!;
    }
  }
  return out;
}

/** out = A * Bᵀ for row-major A (n x k) and B (m x k); out is n x m. */
export function matMulT(out: Float64Array, A: ArrayLike<number>, B: ArrayLike<number>, n: number, k: number, m: number): Float64Array {
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < m; j++) {
      let s = 0;
      for (let l = 0; l < k; l++) s += A[i * k + l]! * B[j * k + l]!;
      out[i * m + j] = s;
    }
  }
  return out;
}

/**
 * In-place Cholesky factorisation of a symmetric positive-definite n x n
 * matrix (row-major, lower triangle used). On success the lower triangle
 * holds L with A = L Lᵀ. Returns the 0-based column where a non-positive
 * pivot appeared, or -1 on success.
 */
export function choleskyInPlace(A: Float64Array, n: number): number {
  for (let j = 0; j < n; j++) {
    let d = A[j * n + j]!;
    for (let k = 0; k < j; k++) d -= A[j * n + k]! * A[j * n + k]!;
    if (!(d > 0)) return j;
    const ljj = Math.sqrt(d);
    A[j * n + j] = ljj;
    for (let i = j + 1; i < n; i++) {
      let s = A[i * n + j]!;
      for (let k = 0; k < j; k++) s -= A[i * n + k]! * A[j * n + k]!;
      A[i * n + j] = s / ljj;
    }
  }
  return -1;
}

/** Solves L Lᵀ x = b in place (b becomes x), with L from choleskyInPlace. */
export function choleskySolveInPlace(L: Float64Array, n: number, b: Float64Array): Float64Array {
  for (let i = 0; i < n; i++) {
    let s = b[i]!;
    for (let k = 0; k < i; k++) s -= L[i * n + k]! * b[k]!;
    b[i] = s / L[i * n + i]!;
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i]!;
    for (let k = i + 1; k < n; k++) s -= L[k * n + i]! * b[k]!;
    b[i] = s / L[i * n + i]!;
  }
  return b;
}

/**
 * Inverse of a symmetric positive-definite n x n matrix via Cholesky.
 * Returns null when the matrix is not positive definite.
 */
export function spdInverse(A: ArrayLike<number>, n: number): Float64Array | null {
  const L = Float64Array.from(A as ArrayLike<number>);
  if (choleskyInPlace(L, n) >= 0) return null;
  const inv = new Float64Array(n * n);
  const col = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    col.fill(0);
    col[j] = 1;
    choleskySolveInPlace(L, n, col);
    for (let i = 0; i < n; i++) inv[i * n + j] = col[i]!;
  }
  // Symmetrise against round-off.
  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      const s = 0.5 * (inv[i * n + j]! + inv[j * n + i]!);
      inv[i * n + j] = s;
      inv[j * n + i] = s;
    }
  }
  return inv;
}

/**
 * Triangular factor R (n x n, row-major, upper) of the QR factorisation of a
 * tall m x n matrix A (m ≥ n, row-major; A is overwritten), by Householder
 * reflections. RᵀR = AᵀA and R has the singular values and right singular
 * vectors of A, so an SVD of the small R replaces one of the tall A without
 * squaring the condition number (as forming AᵀA would).
 */
export function householderR(A: Float64Array, m: number, n: number): Float64Array {
  for (let k = 0; k < n; k++) {
    let norm = 0;
    for (let i = k; i < m; i++) norm += A[i * n + k]! * A[i * n + k]!;
    norm = Math.sqrt(norm);
    if (norm === 0) continue;
    const alpha = A[k * n + k]! > 0 ? -norm : norm;
    // v = x − alpha e_k, stored in column k below the diagonal (v_k in place of A[k][k]).
    const vk = A[k * n + k]! - alpha;
    A[k * n + k] = vk;
    let vnorm2 = vk * vk;
    for (let i = k + 1; i < m; i++) vnorm2 += A[i * n + k]! * A[i * n + k]!;
    if (vnorm2 === 0) {
      A[k * n + k] = alpha;
      continue;
    }
    for (let j = k + 1; j < n; j++) {
      let dot = 0;
      for (let i = k; i < m; i++) dot += A[i * n + k]! * A[i * n + j]!;
      const f = (2 * dot) / vnorm2;
      for (let i = k; i < m; i++) A[i * n + j] = A[i * n + j]! - f * A[i * n + k]!;
    }
    A[k * n + k] = alpha;
  }
  const R = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = i; j < n; j++) R[i * n + j] = A[i * n + j]!;
  return R;
}
