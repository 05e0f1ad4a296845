/**
 * EPnP on bearing vectors: V. Lepetit, F. Moreno-Noguer, P. Fua, "EPnP: An
 * Accurate O(n) Solution to the PnP Problem", IJCV 81(2), 2009.
 *
 * Each target point is written as an affine combination of control points,
 * p_i = Σ_j α_ij c_j (Σ_j α_ij = 1); c_0 is the centroid and c_1..c_3 lie
 * along the principal axes at one standard deviation. The same α hold in the
 * camera frame, so the 3k camera coordinates x = (c_0ᶜ, …) satisfy, for every
 * point's unit bearing f_i (from the camera's unproject),
 *   f_i × Σ_j α_ij c_jᶜ = 0,
 * of which two independent rows are e_1ᵀ(…) = 0, e_2ᵀ(…) = 0 with e_1, e_2 an
 * orthonormal basis of f_i's orthogonal complement. Working on bearings
 * (instead of the paper's x/z, y/z) makes the method valid for any viewing
 * direction, including fisheye rays with z ≤ 0.
 *
 * x lies in the span of the N eigenvectors v_k of MᵀM with smallest
 * eigenvalues: x = Σ β_k v_k. The β follow from the inter-control-point
 * distances (‖c_aᶜ − c_bᶜ‖ = ‖c_a − c_b‖), linearised as in the paper for
 * N = 1, 2, 3 and polished by Gauss–Newton on the distance residuals. Each
 * candidate is aligned to the target by Procrustes (nearestRotation) and the
 * one with the smallest bearing error wins.
 *
 * Planar targets use 3 control points (k = 3), non-planar ones 4 (k = 4).
 */
import { EigenvalueDecomposition, Matrix, solve } from 'ml-matrix';
import { nearestRotation } from '../geometry/so3.js';
import type { Pose } from '../geometry/se3.js';
import { mat3Det } from '../linalg/small.js';

export type EpnpFailure = 'too_few_points' | 'degenerate' | 'behind_camera';

export type EpnpResult =
  | {
      ok: true;
      T_cam_target: Pose;
      /** Number of null-space vectors N of the winning candidate. */
      nullDim: number;
      /** RMS over points of ‖normalise(R p + t) − f‖ (≈ angle in radians) of the winning candidate. */
      bearingRms: number;
    }
  | { ok: false; reason: EpnpFailure; message: string };

/**
 * epnp(points3d, bearings, planar) → T_cam_target.
 * points3d: xyz interleaved (target frame, metres). bearings: unit vectors in
 * the camera frame, interleaved. planar: use 3 control points (the points lie
 * on a plane through their centroid).
 */
export function epnp(points3d: ArrayLike<number>, bearings: ArrayLike<number>, planar: boolean): EpnpResult {
  const n = points3d.length / 3;
  if (n < 4) return { ok: false, reason: 'too_few_points', message: `EPnP needs at least 4 points, got ${n}` };
  const k = planar ? 3 : 4;

  // Control points in the target frame from the principal axes.
  const c0 = [0, 0, 0];
  for (let i = 0; i < n; i++) for (let d = 0; d < 3; d++) c0[d]! += points3d[3 * i + d]! / n;
  const S = new Matrix(3, 3);
  for (let i = 0; i < n; i++) {
    const q = [points3d[3 * i]! - c0[0]!, points3d[3 * i + 1]! - c0[1]!, points3d[3 * i + 2]! - c0[2]!];
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) S.set(a, b, S.get(a, b) + q[a]! * q[b]!);
  }
  const eig = new EigenvalueDecomposition(S, { assumeSymmetric: true });
  const order = [0, 1, 2].sort((a, b) => eig.realEigenvalues[b]! - eig.realEigenvalues[a]!);
  const ctrl: number[][] = [c0];
  for (let j = 0; j < k - 1; j++) {
    const ax = order[j]!;
    const s = Math.sqrt(Math.max(eig.realEigenvalues[ax]!, 0) / n);
    if (!(s > 0)) return { ok: false, reason: 'degenerate', message: 'the target points do not span enough dimensions for EPnP' };
    ctrl.push([0, 1, 2].map((d) => c0[d]! + s * eig.eigenvectorMatrix.get(d, ax)));
  }

  // Barycentric coordinates α (n x k): solve p − c0 = Σ_{j≥1} α_j (c_j − c0).
  const B = new Matrix(3, k - 1);
  for (let j = 1; j < k; j++) for (let d = 0; d < 3; d++) B.set(d, j - 1, ctrl[j]![d]! - c0[d]!);
  // Least-squares inverse of B (3 x (k−1)); for k = 4 this is B⁻¹, for k = 3 the in-plane part.
  const Bt = B.transpose();
  const Binv = solveSmall(Bt.mmul(B), Bt);
  const alpha = new Float64Array(n * k);
  for (let i = 0; i < n; i++) {
    let sum = 0;
    for (let j = 1; j < k; j++) {
      let a = 0;
      for (let d = 0; d < 3; d++) a += Binv.get(j - 1, d) * (points3d[3 * i + d]! - c0[d]!);
      alpha[i * k + j] = a;
      sum += a;
    }
    alpha[i * k] = 1 - sum;
  }

  // MᵀM accumulated directly (3k x 3k).
  const m = 3 * k;
  const MtM = new Matrix(m, m);
  const row = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    const f = [bearings[3 * i]!, bearings[3 * i + 1]!, bearings[3 * i + 2]!];
    const [e1, e2] = tangentBasis(f);
    for (const e of [e1, e2]) {
      for (let j = 0; j < k; j++) for (let d = 0; d < 3; d++) row[3 * j + d] = alpha[i * k + j]! * e[d]!;
      for (let a = 0; a < m; a++) {
        const ra = row[a]!;
        if (ra === 0) continue;
        for (let b = 0; b < m; b++) MtM.set(a, b, MtM.get(a, b) + ra * row[b]!);
      }
    }
  }
  const em = new EigenvalueDecomposition(MtM, { assumeSymmetric: true });
  const eorder = Array.from({ length: m }, (_, i) => i).sort((a, b) => em.realEigenvalues[a]! - em.realEigenvalues[b]!);
  const v: Float64Array[] = [];
  for (let q = 0; q < 3; q++) {
    const col = new Float64Array(m);
    for (let a = 0; a < m; a++) col[a] = em.eigenvectorMatrix.get(a, eorder[q]!);
    v.push(col);
  }

  // Control-point pairs and their squared distances in the target frame.
  const pairs: [number, number][] = [];
  for (let a = 0; a < k; a++) for (let b = a + 1; b < k; b++) pairs.push([a, b]);
  const d2 = pairs.map(([a, b]) => sq(sub3(ctrl[a]!, ctrl[b]!)));
  const dv = (vec: Float64Array, a: number, b: number) => [vec[3 * a]! - vec[3 * b]!, vec[3 * a + 1]! - vec[3 * b + 1]!, vec[3 * a + 2]! - vec[3 * b + 2]!];

  const candidates: { betas: number[]; N: number }[] = [];
  // N = 1
  {
    let num = 0, den = 0;
    pairs.forEach(([a, b], p) => {
      const l = Math.sqrt(sq(dv(v[0]!, a, b)));
      num += l * Math.sqrt(d2[p]!);
      den += l * l;
    });
    if (den > 0) candidates.push({ betas: [num / den], N: 1 });
  }
  // N = 2, 3: linearise ‖Σ β_k dv_k‖² = d² in the products β_k β_l.
  for (const N of [2, 3]) {
    const prods: [number, number][] = [];
    for (let a = 0; a < N; a++) for (let b = a; b < N; b++) prods.push([a, b]);
    if (pairs.length < prods.length) continue;
    const L = new Matrix(pairs.length, prods.length);
    pairs.forEach(([a, b], p) => {
      const dvs = v.slice(0, N).map((vec) => dv(vec, a, b));
      prods.forEach(([x, y], c) => L.set(p, c, (x === y ? 1 : 2) * dot(dvs[x]!, dvs[y]!)));
    });
    const rhs = Matrix.columnVector(d2);
    const Lt = L.transpose();
    let sol: Matrix;
    try {
      sol = solveSmall(Lt.mmul(L), Lt.mmul(rhs));
    } catch {
      continue;
    }
    const bb = (x: number, y: number) => sol.get(prods.findIndex(([p, q]) => p === Math.min(x, y) && q === Math.max(x, y)), 0);
    const b0 = Math.sqrt(Math.abs(bb(0, 0)));
    const betas = [b0];
    for (let q = 1; q < N; q++) betas.push(Math.sign(bb(0, q)) * Math.sqrt(Math.abs(bb(q, q))));
    if (betas.every(Number.isFinite)) candidates.push({ betas, N });
  }
  if (candidates.length === 0) return { ok: false, reason: 'degenerate', message: 'EPnP found no usable null-space combination' };

  let best: { pose: Pose; err: number; N: number } | undefined;
  let reflected = 0;
  for (const cand of candidates) {
    const betas = gaussNewtonBetas(cand.betas, v, pairs, d2, dv);
    const xc = new Float64Array(m);
    for (let q = 0; q < betas.length; q++) for (let a = 0; a < m; a++) xc[a]! += betas[q]! * v[q]![a]!;
    const pc = new Float64Array(3 * n);
    let depth = 0;
    for (let i = 0; i < n; i++) {
      for (let d = 0; d < 3; d++) {
        let s = 0;
        for (let j = 0; j < k; j++) s += alpha[i * k + j]! * xc[3 * j + d]!;
        pc[3 * i + d] = s;
      }
      depth += pc[3 * i]! * bearings[3 * i]! + pc[3 * i + 1]! * bearings[3 * i + 1]! + pc[3 * i + 2]! * bearings[3 * i + 2]!;
    }
    if (depth < 0) for (let a = 0; a < 3 * n; a++) pc[a] = -pc[a]!;
    const al = procrustes(points3d, pc, n);
    if (!planar && al.reflection) {
      reflected++;
      continue;
    }
    const err = bearingError(al.pose, points3d, bearings, n);
    if (!best || err < best.err) best = { pose: al.pose, err, N: cand.N };
  }
  if (!best) {
    return {
      ok: false,
      reason: 'behind_camera',
      message: `the detections fit only a mirror image of the target (${reflected} candidate(s)), as if the target were behind the camera; check the point/pixel correspondence and the camera model`,
    };
  }
  return { ok: true, T_cam_target: best.pose, nullDim: best.N, bearingRms: best.err };
}

/** Gauss–Newton on e_p(β) = ‖Σ_k β_k dv_k^p‖² − d_p² over the control-point pairs p. */
function gaussNewtonBetas(
  init: number[],
  v: Float64Array[],
  pairs: [number, number][],
  d2: number[],
  dv: (vec: Float64Array, a: number, b: number) => number[],
): number[] {
  const N = init.length;
  const beta = init.slice();
  const dvs = pairs.map(([a, b]) => v.slice(0, N).map((vec) => dv(vec, a, b)));
  for (let it = 0; it < 10; it++) {
    const JtJ = new Matrix(N, N);
    const Jte = new Matrix(N, 1);
    pairs.forEach((_, p) => {
      const s = [0, 0, 0];
      for (let q = 0; q < N; q++) for (let d = 0; d < 3; d++) s[d]! += beta[q]! * dvs[p]![q]![d]!;
      const e = sq(s) - d2[p]!;
      const J = dvs[p]!.map((w) => 2 * dot(s, w));
      for (let a = 0; a < N; a++) {
        Jte.set(a, 0, Jte.get(a, 0) + J[a]! * e);
        for (let b = 0; b < N; b++) JtJ.set(a, b, JtJ.get(a, b) + J[a]! * J[b]!);
      }
    });
    let step: Matrix;
    try {
      step = solveSmall(JtJ, Jte);
    } catch {
      break;
    }
    let ok = true;
    for (let a = 0; a < N; a++) if (!Number.isFinite(step.get(a, 0))) ok = false;
    if (!ok) break;
    for (let a = 0; a < N; a++) beta[a]! -= step.get(a, 0);
  }
  return beta;
}

/**
 * Rigid alignment pc ≈ R·pw + t (orthogonal Procrustes). `reflection` is set
 * when the best orthogonal fit is a reflection by a clear margin, i.e. the
 * cross-covariance has det < −1e-6·‖·‖_F³ (meaningless for planar sets, whose
 * cross-covariance is rank 2).
 */
export function procrustes(pw: ArrayLike<number>, pc: ArrayLike<number>, n: number): { pose: Pose; reflection: boolean } {
  const cw = [0, 0, 0], cc = [0, 0, 0];
  for (let i = 0; i < n; i++) {
    for (let d = 0; d < 3; d++) {
      cw[d]! += pw[3 * i + d]! / n;
      cc[d]! += pc[3 * i + d]! / n;
    }
  }
  const M = new Float64Array(9);
  for (let i = 0; i < n; i++) {
    for (let a = 0; a < 3; a++) {
      const qa = pc[3 * i + a]! - cc[a]!;
      for (let b = 0; b < 3; b++) M[a * 3 + b]! += qa * (pw[3 * i + b]! - cw[b]!);
    }
  }
  let fro = 0;
  for (let a = 0; a < 9; a++) fro += M[a]! * M[a]!;
  fro = Math.sqrt(fro);
  const reflection = mat3Det(M) < -1e-6 * fro * fro * fro;
  const R = nearestRotation(M);
  const t = new Float64Array(3);
  for (let a = 0; a < 3; a++) t[a] = cc[a]! - (R[3 * a]! * cw[0]! + R[3 * a + 1]! * cw[1]! + R[3 * a + 2]! * cw[2]!);
  return { pose: { R, t }, reflection };
}

/** RMS of ‖normalise(R p_i + t) − f_i‖ over the points (chord length ≈ angle, radians). */
export function bearingError(T: Pose, points3d: ArrayLike<number>, bearings: ArrayLike<number>, n: number): number {
  let s = 0;
  const R = T.R;
  for (let i = 0; i < n; i++) {
    const x = points3d[3 * i]!, y = points3d[3 * i + 1]!, z = points3d[3 * i + 2]!;
    const q = [R[0]! * x + R[1]! * y + R[2]! * z + T.t[0]!, R[3]! * x + R[4]! * y + R[5]! * z + T.t[1]!, R[6]! * x + R[7]! * y + R[8]! * z + T.t[2]!];
    const l = Math.sqrt(sq(q));
    for (let d = 0; d < 3; d++) {
      const e = q[d]! / l - bearings[3 * i + d]!;
      s += e * e;
    }
  }
  return Math.sqrt(s / n);
}

/** Orthonormal e1, e2 with e1 ⟂ f, e2 = f × e1 (f unit). */
function tangentBasis(f: number[]): [number[], number[]] {
  const ax = Math.abs(f[0]!), ay = Math.abs(f[1]!), az = Math.abs(f[2]!);
  const a = ax <= ay && ax <= az ? [1, 0, 0] : ay <= az ? [0, 1, 0] : [0, 0, 1];
  const e1 = cross(f, a);
  const l = Math.sqrt(sq(e1));
  for (let d = 0; d < 3; d++) e1[d] = e1[d]! / l;
  return [e1, cross(f, e1)];
}

/** Solves the small square system A x = b (ml-matrix LU); throws when A is singular. */
function solveSmall(A: Matrix, b: Matrix): Matrix {
  return solve(A, b);
}

function cross(a: number[], b: number[]): number[] {
  return [a[1]! * b[2]! - a[2]! * b[1]!, a[2]! * b[0]! - a[0]! * b[2]!, a[0]! * b[1]! - a[1]! * b[0]!];
}
function dot(a: number[], b: number[]): number {
  return a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]!;
}
function sq(a: number[]): number {
  return dot(a, a);
}
function sub3(a: number[], b: number[]): number[] {
  return [a[0]! - b[0]!, a[1]! - b[1]!, a[2]! - b[2]!];
}
