/**
 * Normal equations of the Gauss–Newton model and their Schur-complement solve.
 *
 * Linearisation (per residual block, one evaluate() call):
 *   1. residuals r (m) and inner Jacobian J (m x p), p = innerSize;
 *   2. loss weighting per group (IRLS: r̃ = √ρ′ r, J̃ = √ρ′ J, see loss.ts);
 *   3. A = J̃ᵀJ̃ (p x p) and b = J̃ᵀr̃ (p), formed once per block;
 *   4. for every pair of non-constant positions (k, l):
 *        H_kl += M_kᵀ A M_l,   g_k += M_kᵀ b
 *      (M_k = column selection when the block is not mapped).
 * A block with linearizeInner() supplies A and b itself (no stored J); maps
 * that are exactly ±I are added without products (scatterPose6).
 * H is split into the kept part H_cc (dense nc x nc, nc = Σ kept tangent
 * sizes: small), the block-diagonal eliminated part H_ee (one te x te block
 * per eliminated block) and the coupling blocks H_ec (te x tc), stored only
 * for the (eliminated, kept) pairs that share a residual block.
 *
 * Damped solve of (H + λD) δ = −g, D = diag(d) (Marquardt scaling):
 *   S  = H_cc + λD_c − Σ_e H_ceᵀ… = H_cc + λD_c − Σ_e H_ecᵀ (H_ee + λD_e)⁻¹ H_ec
 *   s  = −g_c + Σ_e H_ecᵀ (H_ee + λD_e)⁻¹ g_e
 *   S δ_c = s (dense Cholesky),
 * each eliminated block through its factor H_ee + λD_e = L Lᵀ: with
 * V = L⁻¹ H_ec and w = L⁻¹ g_e its terms are Vᵀ V and Vᵀ w (forward
 * substitution only; the Gram update writes S's upper triangle),
 *   δ_e = (H_ee + λD_e)⁻¹ (−g_e − H_ec δ_c)  (back-substitution).
 * The cost of one linearisation is linear in the number of residuals; the
 * Schur update is Σ_e (#couplings_e)² small products, never an
 * (#eliminated x #kept) dense array.
 *
 * Fixed tangent coordinates get a zero gradient, zero rows and columns and a
 * unit diagonal, so their step is exactly zero.
 */
import { choleskyInPlace, choleskySolveInPlace } from '../linalg/small.js';
import type { LossFunction } from './loss.js';
import { POS_CONSTANT, POS_ELIMINATED, POS_KEPT, type Problem, type ProblemLayout } from './problem-builder.js';

export type LinearSolveStatus =
  | { ok: true }
  | { ok: false; reason: 'eliminated_block_not_positive_definite'; blockId: number; column: number }
  | { ok: false; reason: 'reduced_system_not_positive_definite'; column: number };

/** Result of evaluating one residual block's residuals at the current values. */
export type EvaluationStatus = { ok: true } | { ok: false; residualBlock: number };

/**
 * Loss weighting of one residual block in place (IRLS, see loss.ts): for each
 * group of gs residuals, r_g ← √ρ′ r_g and J_g ← √ρ′ J_g. Returns ½ Σ_g ρ(‖r_g‖²).
 */
function weightGroups(r: Float64Array, J: Float64Array, m: number, p: number, gs: number, loss: LossFunction, rho: Float64Array): number {
  let cost = 0;
  for (let g0 = 0; g0 < m; g0 += gs) {
    let s = 0;
    const g1 = g0 + gs;
    for (let q = g0; q < g1; q++) s += r[q]! * r[q]!;
    loss.evaluate(s, rho);
    cost += rho[0]!;
    const d1 = rho[1]!;
    if (d1 === 1) continue;
    const w = d1 > 0 ? Math.sqrt(d1) : 0;
    for (let q = g0; q < g1; q++) r[q] = r[q]! * w;
    const e = g1 * p;
    for (let k = g0 * p; k < e; k++) J[k] = J[k]! * w;
  }
  return 0.5 * cost;
}

/** ½ Σ_g ρ(‖r_g‖²) over groups of gs residuals (ρ(s) = s without a loss). */
function groupCost(r: Float64Array, m: number, gs: number, loss: LossFunction | undefined, rho: Float64Array): number {
  let cost = 0;
  if (!loss) {
    for (let q = 0; q < m; q++) cost += r[q]! * r[q]!;
    return 0.5 * cost;
  }
  for (let g0 = 0; g0 < m; g0 += gs) {
    let s = 0;
    const g1 = g0 + gs;
    for (let q = g0; q < g1; q++) s += r[q]! * r[q]!;
    loss.evaluate(s, rho);
    cost += rho[0]!;
  }
  return 0.5 * cost;
}

/**
 * A = JᵀJ (p x p, full), b = Jᵀr for an m x p row-major J. J is first
 * transposed into JT (p x m) so every entry of A is a contiguous dot product
 * with its accumulator in a register (four columns at a time).
 */
function normalGeneric(J: Float64Array, r: Float64Array, m: number, p: number, A: Float64Array, b: Float64Array, JT: Float64Array): void {
  for (let q = 0; q < m; q++) {
    const base = q * p;
    for (let a = 0; a < p; a++) JT[a * m + q] = J[base + a]!;
  }
  for (let a = 0; a < p; a++) {
    const oa = a * m;
    let sb = 0;
    for (let q = 0; q < m; q++) sb += JT[oa + q]! * r[q]!;
    b[a] = sb;
    let c = a;
    for (; c + 3 < p; c += 4) {
      const o0 = c * m, o1 = o0 + m, o2 = o1 + m, o3 = o2 + m;
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
      for (let q = 0; q < m; q++) {
        const x = JT[oa + q]!;
        s0 += x * JT[o0 + q]!;
        s1 += x * JT[o1 + q]!;
        s2 += x * JT[o2 + q]!;
        s3 += x * JT[o3 + q]!;
      }
      A[a * p + c] = s0; A[a * p + c + 1] = s1; A[a * p + c + 2] = s2; A[a * p + c + 3] = s3;
      A[c * p + a] = s0; A[(c + 1) * p + a] = s1; A[(c + 2) * p + a] = s2; A[(c + 3) * p + a] = s3;
    }
    for (; c < p; c++) {
      const oc = c * m;
      let s0 = 0;
      for (let q = 0; q < m; q++) s0 += JT[oa + q]! * JT[oc + q]!;
      A[a * p + c] = s0;
      A[c * p + a] = s0;
    }
  }
}

/** normalGeneric for p = 6 with the 21 + 6 sums kept in registers (the pose-sized hot path). */
function normal6(J: Float64Array, r: Float64Array, m: number, A: Float64Array, b: Float64Array): void {
  let a00 = 0, a01 = 0, a02 = 0, a03 = 0, a04 = 0, a05 = 0;
  let a11 = 0, a12 = 0, a13 = 0, a14 = 0, a15 = 0;
  let a22 = 0, a23 = 0, a24 = 0, a25 = 0;
  let a33 = 0, a34 = 0, a35 = 0;
  let a44 = 0, a45 = 0;
  let a55 = 0;
  let b0 = 0, b1 = 0, b2 = 0, b3 = 0, b4 = 0, b5 = 0;
  for (let q = 0, o = 0; q < m; q++, o += 6) {
    const j0 = J[o]!, j1 = J[o + 1]!, j2 = J[o + 2]!, j3 = J[o + 3]!, j4 = J[o + 4]!, j5 = J[o + 5]!;
    const rq = r[q]!;
    b0 += j0 * rq; b1 += j1 * rq; b2 += j2 * rq; b3 += j3 * rq; b4 += j4 * rq; b5 += j5 * rq;
    a00 += j0 * j0; a01 += j0 * j1; a02 += j0 * j2; a03 += j0 * j3; a04 += j0 * j4; a05 += j0 * j5;
    a11 += j1 * j1; a12 += j1 * j2; a13 += j1 * j3; a14 += j1 * j4; a15 += j1 * j5;
    a22 += j2 * j2; a23 += j2 * j3; a24 += j2 * j4; a25 += j2 * j5;
    a33 += j3 * j3; a34 += j3 * j4; a35 += j3 * j5;
    a44 += j4 * j4; a45 += j4 * j5;
    a55 += j5 * j5;
  }
  A[0] = a00; A[1] = a01; A[2] = a02; A[3] = a03; A[4] = a04; A[5] = a05;
  A[6] = a01; A[7] = a11; A[8] = a12; A[9] = a13; A[10] = a14; A[11] = a15;
  A[12] = a02; A[13] = a12; A[14] = a22; A[15] = a23; A[16] = a24; A[17] = a25;
  A[18] = a03; A[19] = a13; A[20] = a23; A[21] = a33; A[22] = a34; A[23] = a35;
  A[24] = a04; A[25] = a14; A[26] = a24; A[27] = a34; A[28] = a44; A[29] = a45;
  A[30] = a05; A[31] = a15; A[32] = a25; A[33] = a35; A[34] = a45; A[35] = a55;
  b[0] = b0; b[1] = b1; b[2] = b2; b[3] = b3; b[4] = b4; b[5] = b5;
}

/**
 * In-place Cholesky of the n x n row-major matrix stored at M[off…]; lower
 * triangle holds L afterwards. Returns the failing column or −1 (same
 * algorithm as linalg/small.ts choleskyInPlace, with an offset so the flat
 * per-block buffers need no subarray views).
 */
function choleskyAt(M: Float64Array, off: number, n: number): number {
  for (let j = 0; j < n; j++) {
    let d = M[off + j * n + j]!;
    for (let k = 0; k < j; k++) d -= M[off + j * n + k]! * M[off + j * n + k]!;
    if (!(d > 0)) return j;
    const ljj = Math.sqrt(d);
    M[off + j * n + j] = ljj;
    for (let i = j + 1; i < n; i++) {
      let s = M[off + i * n + j]!;
      for (let k = 0; k < j; k++) s -= M[off + i * n + k]! * M[off + j * n + k]!;
      M[off + i * n + j] = s / ljj;
    }
  }
  return -1;
}

/**
 * 6x6 forward substitution: out[t + k] = (L⁻¹ x)_k, k = 0…5, for x_k = src[s + k·stride] and the lower
 * factor L at M[o…] (row-major 6x6). out may be src when t = s and stride = 1.
 */
function forward6(M: Float64Array, o: number, src: Float64Array, s: number, stride: number, out: Float64Array, t: number): void {
  const x0 = src[s]! / M[o]!;
  const x1 = (src[s + stride]! - M[o + 6]! * x0) / M[o + 7]!;
  const x2 = (src[s + 2 * stride]! - M[o + 12]! * x0 - M[o + 13]! * x1) / M[o + 14]!;
  const x3 = (src[s + 3 * stride]! - M[o + 18]! * x0 - M[o + 19]! * x1 - M[o + 20]! * x2) / M[o + 21]!;
  const x4 = (src[s + 4 * stride]! - M[o + 24]! * x0 - M[o + 25]! * x1 - M[o + 26]! * x2 - M[o + 27]! * x3) / M[o + 28]!;
  const x5 = (src[s + 5 * stride]! - M[o + 30]! * x0 - M[o + 31]! * x1 - M[o + 32]! * x2 - M[o + 33]! * x3 - M[o + 34]! * x4) / M[o + 35]!;
  out[t] = x0;
  out[t + 1] = x1;
  out[t + 2] = x2;
  out[t + 3] = x3;
  out[t + 4] = x4;
  out[t + 5] = x5;
}

/** Solves L X = B in place for B (n x w, row-major, rows of length w), L (lower) at M[off…]. */
function forwardRowsAt(M: Float64Array, off: number, n: number, B: Float64Array, w: number): void {
  for (let i = 0; i < n; i++) {
    const bi = i * w;
    for (let k = 0; k < i; k++) {
      const l = M[off + i * n + k]!;
      if (l === 0) continue;
      const bk = k * w;
      for (let v = 0; v < w; v++) B[bi + v] = B[bi + v]! - l * B[bk + v]!;
    }
    const inv = 1 / M[off + i * n + i]!;
    for (let v = 0; v < w; v++) B[bi + v] = B[bi + v]! * inv;
  }
}

/** Solves L Lᵀ X = B in place for B (n x w, row-major, rows of length w), L at M[off…]. */
function solveRowsAt(M: Float64Array, off: number, n: number, B: Float64Array, w: number): void {
  forwardRowsAt(M, off, n, B, w);
  for (let i = n - 1; i >= 0; i--) {
    const bi = i * w;
    for (let k = i + 1; k < n; k++) {
      const l = M[off + k * n + i]!;
      if (l === 0) continue;
      const bk = k * w;
      for (let v = 0; v < w; v++) B[bi + v] = B[bi + v]! - l * B[bk + v]!;
    }
    const inv = 1 / M[off + i * n + i]!;
    for (let v = 0; v < w; v++) B[bi + v] = B[bi + v]! * inv;
  }
}

/**
 * P = Vᵀ V (W x W, upper triangle) for V te x W, then S[idx_a, idx_b] −= P_ab
 * for b ≥ a. idx is ascending so only S's upper triangle is written.
 */
function gramSubtract(V: Float64Array, P: Float64Array, S: Float64Array, idx: Int32Array, W: number, te: number, nc: number): void {
  for (let a = 0; a < W; a++) for (let c = a; c < W; c++) P[a * W + c] = 0;
  for (let u = 0; u < te; u++) {
    const row = u * W;
    for (let a = 0; a < W; a++) {
      const va = V[row + a]!;
      if (va === 0) continue;
      const pa = a * W;
      for (let c = a; c < W; c++) P[pa + c] = P[pa + c]! + va * V[row + c]!;
    }
  }
  for (let a = 0; a < W; a++) {
    const rowS = idx[a]! * nc;
    const pa = a * W;
    for (let c = a; c < W; c++) S[rowS + idx[c]!] = S[rowS + idx[c]!]! - P[pa + c]!;
  }
}

/** +1 when the 6x6 row-major M is exactly the identity, −1 when exactly its negative, else 0. */
function identityScale(M: Float64Array): number {
  const d = M[0]!;
  if (d !== 1 && d !== -1) return 0;
  for (let r = 0; r < 6; r++) {
    for (let c = 0; c < 6; c++) if (M[r * 6 + c] !== (r === c ? d : 0)) return 0;
  }
  return d;
}

/** Copies the upper triangle of the n x n row-major S into its lower triangle. */
function mirrorUpper(S: Float64Array, n: number): void {
  for (let r = 1; r < n; r++) for (let c = 0; c < r; c++) S[r * n + c] = S[c * n + r]!;
}

/** T = A M for 6x6 row-major A, M. */
function mul66(A: Float64Array, M: Float64Array, T: Float64Array): void {
  for (let a = 0; a < 6; a++) {
    const a0 = A[a * 6]!, a1 = A[a * 6 + 1]!, a2 = A[a * 6 + 2]!, a3 = A[a * 6 + 3]!, a4 = A[a * 6 + 4]!, a5 = A[a * 6 + 5]!;
    for (let v = 0; v < 6; v++) {
      T[a * 6 + v] = a0 * M[v]! + a1 * M[6 + v]! + a2 * M[12 + v]! + a3 * M[18 + v]! + a4 * M[24 + v]! + a5 * M[30 + v]!;
    }
  }
}

/** B = Mᵀ T for 6x6 row-major M, T. */
function mulT66(M: Float64Array, T: Float64Array, B: Float64Array): void {
  for (let u = 0; u < 6; u++) {
    const m0 = M[u]!, m1 = M[6 + u]!, m2 = M[12 + u]!, m3 = M[18 + u]!, m4 = M[24 + u]!, m5 = M[30 + u]!;
    for (let v = 0; v < 6; v++) {
      B[u * 6 + v] = m0 * T[v]! + m1 * T[6 + v]! + m2 * T[12 + v]! + m3 * T[18 + v]! + m4 * T[24 + v]! + m5 * T[30 + v]!;
    }
  }
}

/** dest[off + u·stride + v] += s·B[u·6 + v] for a 6x6 B. */
function addScaled66(B: Float64Array, s: number, dest: Float64Array, off: number, stride: number): void {
  for (let u = 0; u < 6; u++) {
    const rowD = off + u * stride;
    for (let v = 0; v < 6; v++) dest[rowD + v] = dest[rowD + v]! + s * B[u * 6 + v]!;
  }
}

/**
 * Scratch and structure shared by every NormalEquations of one problem
 * layout (the LM engine keeps two: the current point and the trial point).
 * Linearisation is not re-entrant, so both can use the same buffers; only
 * the results (g, diag, H blocks, cost) are per instance. Built once per
 * layout, so the trial instance costs only its result arrays.
 */
class Workspace {
  r: Float64Array;
  J: Float64Array;
  JT: Float64Array;
  readonly A: Float64Array;
  readonly b: Float64Array;
  readonly B: Float64Array;
  readonly B2 = new Float64Array(36);
  readonly gk: Float64Array;
  readonly Tl: Float64Array[];
  readonly rho = new Float64Array(3);
  readonly fusedCost = new Float64Array(1);
  /** Per eliminated block: global kept column of each stacked coupling column. */
  readonly stackIndex: Int32Array[];
  /** Per eliminated block: 1 when it and every block it couples to have 6 tangent coordinates (poses). */
  readonly elim6: Uint8Array;
  /** Eliminated blocks with fixed coordinates of their own or in a kept block they couple to. */
  readonly elimWithFixed: number[];
  /** Tangent size of each eliminated block. */
  readonly elimTangent: Int32Array;
  /** Per residual block: 1 when it is mapped, 6 inner columns and every non-constant position a 6-dim block (the pose fast path). */
  readonly pose6: Uint8Array;
  /** Per position of the current block: +1 / −1 when its map equals ± the reference position's map, else 0 (pose fast path). */
  readonly mapSign = new Int8Array(64);
  /**
   * Per residual block: residual, Jacobian and map views sized exactly for
   * it. Blocks of equal sizes share one view (or one array of map views),
   * so a problem with thousands of blocks creates only a handful.
   */
  readonly rViews: Float64Array[];
  readonly jViews: Float64Array[];
  readonly mapViews: Float64Array[][];
  /** problem.residualSizeVersion the residual views were made for. */
  private sizeVersion: number;

  constructor(problem: Problem, L: ProblemLayout) {
    const p = L.maxInner;
    const t = L.maxTangent;
    this.sizeVersion = problem.residualSizeVersion;
    this.r = new Float64Array(L.maxResiduals);
    this.J = new Float64Array(L.maxResiduals * p);
    this.JT = new Float64Array(L.maxResiduals * p);
    this.A = new Float64Array(p * p);
    this.b = new Float64Array(p);
    this.B = new Float64Array(t * t);
    this.gk = new Float64Array(t);
    this.stackIndex = L.couplings.map((cs) => {
      const out: number[] = [];
      for (const c of cs) {
        const o = L.globalOffset[c]!;
        for (let v = 0; v < problem.parameterBlock(c).tangentSize; v++) out.push(o + v);
      }
      return Int32Array.from(out);
    });
    this.elimTangent = Int32Array.from(L.elimBlocks, (id) => problem.parameterBlock(id).tangentSize);
    this.elimWithFixed = [];
    L.elimBlocks.forEach((id, ei) => {
      const fixedHere = problem.parameterBlock(id).fixedTangentIndices.length > 0;
      if (fixedHere || Array.from(L.couplings[ei]!).some((c) => problem.parameterBlock(c).fixedTangentIndices.length > 0)) this.elimWithFixed.push(ei);
    });
    this.elim6 = Uint8Array.from(L.elimBlocks, (id, ei) =>
      problem.parameterBlock(id).tangentSize === 6 && Array.from(L.couplings[ei]!).every((c) => problem.parameterBlock(c).tangentSize === 6) ? 1 : 0,
    );
    let maxArity = 0;
    for (let i = 0; i < problem.numResidualBlocks; i++) maxArity = Math.max(maxArity, problem.residualBlock(i).parameterBlocks.length);
    const mapScratch = Array.from({ length: maxArity }, () => new Float64Array(p * t));
    this.Tl = Array.from({ length: maxArity }, () => new Float64Array(p * t));
    const nb = problem.numResidualBlocks;
    this.pose6 = new Uint8Array(nb);
    this.rViews = new Array<Float64Array>(nb);
    this.jViews = new Array<Float64Array>(nb);
    this.mapViews = new Array<Float64Array[]>(nb);
    this.residualViews(problem);
    const mapsBySignature = new Map<string, Float64Array[]>();
    const noMaps: Float64Array[] = [];
    // Consecutive blocks usually have the same sizes (one view after another): compare with the
    // previous block before building a signature.
    let prevInner = -1;
    const prevSizes: number[] = [];
    let prevMaps = noMaps;
    for (let i = 0; i < nb; i++) {
      const rb = problem.residualBlock(i);
      if (!rb.mapped) {
        this.mapViews[i] = noMaps;
        continue;
      }
      const ps = rb.parameterBlocks;
      let all6 = rb.innerSize === 6 && ps.length <= 64;
      let same = rb.innerSize === prevInner && ps.length === prevSizes.length;
      for (let k = 0; k < ps.length; k++) {
        const ts = problem.parameterBlock(ps[k]!).tangentSize;
        if (L.posKind[i]![k] !== POS_CONSTANT && ts !== 6) all6 = false;
        if (same && prevSizes[k] !== ts) same = false;
      }
      this.pose6[i] = all6 ? 1 : 0;
      if (!same) {
        prevInner = rb.innerSize;
        prevSizes.length = 0;
        for (const pb of ps) prevSizes.push(problem.parameterBlock(pb).tangentSize);
        const sig = `${rb.innerSize}:${prevSizes.join(',')}`;
        let mv = mapsBySignature.get(sig);
        if (!mv) {
          mv = prevSizes.map((ts, k) => mapScratch[k]!.subarray(0, rb.innerSize * ts));
          mapsBySignature.set(sig, mv);
        }
        prevMaps = mv;
      }
      this.mapViews[i] = prevMaps;
    }
  }

  /** After problem.residualSizesChanged(): buffers and residual/Jacobian views for the new counts. */
  refresh(problem: Problem, L: ProblemLayout): void {
    if (this.sizeVersion === problem.residualSizeVersion) return;
    this.sizeVersion = problem.residualSizeVersion;
    const p = L.maxInner;
    if (this.r.length < L.maxResiduals) {
      this.r = new Float64Array(L.maxResiduals);
      this.J = new Float64Array(L.maxResiduals * p);
      this.JT = new Float64Array(L.maxResiduals * p);
    }
    this.residualViews(problem);
  }

  /** rViews and jViews for the current numResiduals (blocks of equal sizes share one view). */
  private residualViews(problem: Problem): void {
    const rBySize = new Map<number, Float64Array>();
    const jBySize = new Map<number, Float64Array>();
    for (let i = 0; i < problem.numResidualBlocks; i++) {
      const rb = problem.residualBlock(i);
      const m = rb.numResiduals;
      const mj = m * rb.innerSize;
      let rv = rBySize.get(m);
      if (!rv) rBySize.set(m, (rv = this.r.subarray(0, m)));
      let jv = jBySize.get(mj);
      if (!jv) jBySize.set(mj, (jv = this.J.subarray(0, mj)));
      this.rViews[i] = rv;
      this.jViews[i] = jv;
    }
  }
}

/** linearizeBlock() result for a block whose evaluate() returned false (a cost is never −∞). */
const NOT_EVALUABLE = -Infinity;

const workspaces = new WeakMap<ProblemLayout, Workspace>();

function workspaceFor(problem: Problem, L: ProblemLayout): Workspace {
  let ws = workspaces.get(L);
  if (!ws) workspaces.set(L, (ws = new Workspace(problem, L)));
  else ws.refresh(problem, L);
  return ws;
}

export class NormalEquations {
  readonly layout: ProblemLayout;
  /** ½ Σ ρ at the last linearize()/evaluateCost() (NaN before: also keeps the field a double from the start). */
  cost = NaN;
  /** Gradient g = J̃ᵀr̃ over the global tangent vector (length N). */
  readonly g: Float64Array;
  /** Diagonal of the undamped H over the global tangent vector. */
  readonly diag: Float64Array;
  readonly Hcc: Float64Array;
  readonly Hee: Float64Array;
  readonly Hec: Float64Array;
  /** Reduced matrix S and right-hand side after reduce(); S holds its Cholesky factor after factor(). */
  readonly S: Float64Array;
  readonly rhs: Float64Array;
  /** Per-eliminated-block Cholesky factors of H_ee + λD_e from the last reduce(). */
  private readonly Lee: Float64Array;
  private readonly ws: Workspace;
  private readonly z: Float64Array;
  private readonly Y: Float64Array;
  private readonly P: Float64Array;

  constructor(readonly problem: Problem) {
    const L = problem.layout();
    this.layout = L;
    const N = L.numTangent;
    const nc = L.numKept;
    this.g = new Float64Array(N);
    this.diag = new Float64Array(N);
    this.Hcc = new Float64Array(nc * nc);
    this.S = new Float64Array(nc * nc);
    this.rhs = new Float64Array(nc);
    this.Hee = new Float64Array(L.heeTotal);
    this.Lee = new Float64Array(L.heeTotal);
    this.Hec = new Float64Array(L.hecTotal);
    this.ws = workspaceFor(problem, L);
    const t = L.maxTangent;
    this.z = new Float64Array(t);
    this.Y = new Float64Array(t * L.maxCouplingWidth);
    this.P = new Float64Array(L.maxCouplingWidth * L.maxCouplingWidth);
  }

  /**
   * Cost ½ Σ_g ρ(‖r_g‖²) at the current values, residuals only. Returns the
   * failing residual block when an evaluate() call returns false or a
   * non-finite residual.
   */
  evaluateCost(): EvaluationStatus {
    const pr = this.problem;
    const ws = this.ws;
    let cost = 0;
    for (let i = 0; i < pr.numResidualBlocks; i++) {
      const rb = pr.residualBlock(i);
      const r = ws.rViews[i]!;
      if (!rb.evaluate(pr.residualParams(i), r, null, null)) return { ok: false, residualBlock: i };
      const m = rb.numResiduals;
      cost += groupCost(r, m, rb.lossGroupSize ?? m, rb.loss, ws.rho);
    }
    if (!Number.isFinite(cost)) return { ok: false, residualBlock: -1 };
    this.cost = cost;
    return { ok: true };
  }

  /** Evaluates residuals and Jacobians and assembles H, g (see file comment). */
  linearize(): EvaluationStatus {
    const n = this.problem.numResidualBlocks;
    this.g.fill(0);
    this.Hcc.fill(0);
    this.Hee.fill(0);
    this.Hec.fill(0);
    let cost = 0;
    // One small method per block rather than one large loop body: the
    // optimiser compiles it whole after a few blocks, instead of
    // on-stack-replacing a loop whose later code has never run.
    for (let i = 0; i < n; i++) {
      const c = this.linearizeBlock(i);
      if (c === NOT_EVALUABLE) return { ok: false, residualBlock: i };
      cost += c;
    }
    if (!Number.isFinite(cost)) return { ok: false, residualBlock: -1 };
    this.cost = cost;
    this.applyFixedAndDiagonal();
    return { ok: true };
  }

  /** Adds residual block i to H and g; returns its cost ½ Σ ρ, or NOT_EVALUABLE. */
  private linearizeBlock(i: number): number {
    const pr = this.problem;
    const ws = this.ws;
    const rb = pr.residualBlock(i);
    const A = ws.A;
    const bv = ws.b;
    const maps = rb.mapped ? ws.mapViews[i]! : null;
    const p = rb.innerSize;
    const params = pr.residualParams(i);
    let cost: number;
    const fused = rb.linearizeInner?.(params, A, bv, maps, ws.rho, ws.fusedCost);
    if (fused === false) return NOT_EVALUABLE;
    if (fused === true) cost = ws.fusedCost[0]!;
    else {
      const r = ws.rViews[i]!;
      const J = ws.jViews[i]!;
      if (!rb.evaluate(params, r, J, maps)) return NOT_EVALUABLE;
      const m = rb.numResiduals;
      const gs = rb.lossGroupSize ?? m;
      const loss = rb.loss;
      if (loss) cost = weightGroups(r, J, m, p, gs, loss, ws.rho);
      else {
        let ss = 0;
        for (let q = 0; q < m; q++) ss += r[q]! * r[q]!;
        cost = 0.5 * ss;
      }
      if (p === 6) normal6(J, r, m, A, bv);
      else normalGeneric(J, r, m, p, A, bv, ws.JT);
    }
    const nc = this.layout.numKept;
    if (ws.pose6[i] === 1) this.scatterPose6(i, rb.parameterBlocks, maps!, nc);
    else this.scatter(i, rb.parameterBlocks, p, maps, nc);
    // A NaN cost is passed on: the caller's finiteness check reports it.
    return cost;
  }

  /**
   * scatter() for a mapped block whose inner size and non-constant blocks are
   * all 6 (poses): dense 6x6 products without zero tests, and a map that
   * equals ± an earlier position's map (e.g. T_ref_cam⁻¹ and T_ref_target in
   * one chain: M_cam = −M_target) reuses that position's products:
   * M_k = s_k M_r, M_l = s_l M_r ⇒ M_kᵀ A M_l = s_k s_l M_rᵀ A M_r.
   * When M_r is exactly ±I (a block that expresses A in that position's own
   * tangent, as the rig's view residual does) no product is formed at all.
   */
  private scatterPose6(i: number, ps: readonly number[], maps: Float64Array[], nc: number): void {
    const L = this.layout;
    const kinds = L.posKind[i]!;
    const hecs = L.posHec[i]!;
    const ws = this.ws;
    const A = ws.A;
    const b = ws.b;
    const g = this.g;
    const Tl = ws.Tl;
    const n = ps.length;
    const sign = ws.mapSign;
    // Fast path: every map is ±I (blocks that express A in a pose block's own tangent):
    // H_kl += s_k s_l A and g_k += s_k b, no products at all.
    let allIdentity = true;
    for (let l = 0; l < n && allIdentity; l++) {
      if (kinds[l] === POS_CONSTANT) continue;
      const s = identityScale(maps[l]!);
      sign[l] = s;
      if (s === 0) allIdentity = false;
    }
    if (allIdentity) {
      for (let k = 0; k < n; k++) {
        const kk = kinds[k]!;
        if (kk === POS_CONSTANT) continue;
        const bk = ps[k]!;
        const sk = sign[k]!;
        const gOff = L.globalOffset[bk]!;
        for (let u = 0; u < 6; u++) g[gOff + u] = g[gOff + u]! + sk * b[u]!;
        for (let l = 0; l < n; l++) {
          const kl = kinds[l]!;
          if (kl === POS_CONSTANT) continue;
          if (kk === POS_KEPT && kl === POS_ELIMINATED) continue;
          this.selectDestination(kk, kl, bk, ps[l]!, hecs[l]!, 6, 6, nc);
          addScaled66(A, sk * sign[l]!, this.dest, this.destOff, this.destStride);
        }
      }
      return;
    }
    // Group positions by their map up to sign; the first position of a group computes T = A M.
    // When the reference map is ±I (identityScale), T = ±A and B_ref = A need no products.
    let ref = -1;
    let refScale = 0;
    for (let l = 0; l < n; l++) {
      sign[l] = 0;
      if (kinds[l] === POS_CONSTANT) continue;
      if (ref >= 0) {
        const Mr = maps[ref]!;
        const Ml = maps[l]!;
        let same = true;
        let neg = true;
        for (let q = 0; q < 36 && (same || neg); q++) {
          const x = Ml[q]!;
          const y = Mr[q]!;
          if (x !== y) same = false;
          if (x !== -y) neg = false;
        }
        if (same) { sign[l] = 1; continue; }
        if (neg) { sign[l] = -1; continue; }
        mul66(A, maps[l]!, Tl[l]!);
      } else {
        ref = l;
        sign[l] = 1;
        refScale = identityScale(maps[l]!);
        if (refScale === 0) mul66(A, maps[l]!, Tl[l]!);
      }
    }
    const B = ws.B;
    let bRef = false;
    for (let k = 0; k < n; k++) {
      const kk = kinds[k]!;
      if (kk === POS_CONSTANT) continue;
      const bk = ps[k]!;
      const sk = sign[k]!;
      const inRefK = sk !== 0;
      const Mk = inRefK ? maps[ref]! : maps[k]!;
      const sMk = inRefK ? sk : 1;
      const gOff = L.globalOffset[bk]!;
      if (inRefK && refScale !== 0) {
        const s = sk * refScale;
        for (let u = 0; u < 6; u++) g[gOff + u] = g[gOff + u]! + s * b[u]!;
      } else {
        for (let u = 0; u < 6; u++) {
          let sum = 0;
          for (let a = 0; a < 6; a++) sum += Mk[a * 6 + u]! * b[a]!;
          g[gOff + u] = g[gOff + u]! + sMk * sum;
        }
      }
      for (let l = 0; l < n; l++) {
        const kl = kinds[l]!;
        if (kl === POS_CONSTANT) continue;
        if (kk === POS_KEPT && kl === POS_ELIMINATED) continue;
        this.selectDestination(kk, kl, bk, ps[l]!, hecs[l]!, 6, 6, nc);
        const dest = this.dest;
        const off = this.destOff;
        const stride = this.destStride;
        const sl = sign[l]!;
        const inRefL = sl !== 0;
        if (inRefK && inRefL) {
          // Both maps are ± M_ref: B_ref = M_refᵀ A M_ref (= A when M_ref = ±I), computed once.
          if (refScale !== 0) addScaled66(A, sk * sl, dest, off, stride);
          else {
            if (!bRef) {
              mulT66(maps[ref]!, Tl[ref]!, B);
              bRef = true;
            }
            addScaled66(B, sk * sl, dest, off, stride);
          }
          continue;
        }
        // General pair: M_kᵀ (A M_l), with A M_l from l's group (±A when that group's map is ±I).
        const sL = inRefL ? sl : 1;
        if (inRefL && refScale !== 0) {
          mulT66(Mk, A, ws.B2);
          addScaled66(ws.B2, sMk * sL * refScale, dest, off, stride);
        } else if (inRefK && refScale !== 0) {
          // M_k = sk·refScale·I: M_kᵀ T_l = sk·refScale·T_l.
          addScaled66(Tl[l]!, sk * refScale * sL, dest, off, stride);
        } else {
          mulT66(Mk, inRefL ? Tl[ref]! : Tl[l]!, ws.B2);
          addScaled66(ws.B2, sMk * sL, dest, off, stride);
        }
      }
    }
  }

  /** Destination of the (k, l) Hessian block chosen by selectDestination(). */
  private dest: Float64Array = new Float64Array(0);
  private destOff = 0;
  private destStride = 0;

  /**
   * Where block (k, l) of the normal matrix lives: H_cc (kept x kept, dense,
   * stride nc), H_ee (the eliminated block's own tk x tk square) or H_ec
   * (eliminated row, kept column, at its precomputed offset, stride tl).
   * Callers skip (kept, eliminated): only H_ec is stored, not its transpose.
   */
  private selectDestination(kk: number, kl: number, bk: number, bl: number, hec: number, tk: number, tl: number, nc: number): void {
    const L = this.layout;
    if (kk === POS_KEPT && kl === POS_KEPT) {
      this.dest = this.Hcc;
      this.destOff = L.globalOffset[bk]! * nc + L.globalOffset[bl]!;
      this.destStride = nc;
    } else if (kk === POS_ELIMINATED && kl === POS_ELIMINATED) {
      this.dest = this.Hee;
      this.destOff = L.heeOffset[L.elimIndex[bk]!]!;
      this.destStride = tk;
    } else {
      this.dest = this.Hec;
      this.destOff = hec;
      this.destStride = tl;
    }
  }

  /** H_kl += M_kᵀ A M_l and g_k += M_kᵀ b for the positions of residual block i. */
  private scatter(i: number, ps: readonly number[], p: number, maps: Float64Array[] | null, nc: number): void {
    const L = this.layout;
    const pr = this.problem;
    const kinds = L.posKind[i]!;
    const cols = L.posColumn[i]!;
    const hecs = L.posHec[i]!;
    const ws = this.ws;
    const A = ws.A;
    const b = ws.b;
    const B = ws.B;
    const gk = ws.gk;
    const g = this.g;
    const Tl = ws.Tl;
    const n = ps.length;
    // T_l = A M_l (p x t_l), once per position.
    if (maps) {
      for (let l = 0; l < n; l++) {
        if (kinds[l] === POS_CONSTANT) continue;
        const tl = pr.parameterBlock(ps[l]!).tangentSize;
        const Ml = maps[l]!;
        const T = Tl[l]!;
        T.fill(0, 0, p * tl);
        // Skip the all-zero rows of M_l (common: a block enters only some inner coordinates).
        for (let c = 0; c < p; c++) {
          const rowM = c * tl;
          let nz = false;
          for (let v = 0; v < tl; v++) if (Ml[rowM + v] !== 0) { nz = true; break; }
          if (!nz) continue;
          for (let a = 0; a < p; a++) {
            const ac = A[a * p + c]!;
            if (ac === 0) continue;
            const rowT = a * tl;
            for (let v = 0; v < tl; v++) T[rowT + v] = T[rowT + v]! + ac * Ml[rowM + v]!;
          }
        }
      }
    }
    for (let k = 0; k < n; k++) {
      const kk = kinds[k]!;
      if (kk === POS_CONSTANT) continue;
      const bk = ps[k]!;
      const tk = pr.parameterBlock(bk).tangentSize;
      const Mk = maps ? maps[k]! : null;
      const ck = cols[k]!;
      // Gradient: g_k += M_kᵀ b.
      if (Mk) {
        gk.fill(0, 0, tk);
        for (let a = 0; a < p; a++) {
          const ba = b[a]!;
          if (ba === 0) continue;
          const row = a * tk;
          for (let u = 0; u < tk; u++) gk[u] = gk[u]! + Mk[row + u]! * ba;
        }
      } else for (let u = 0; u < tk; u++) gk[u] = b[ck + u]!;
      const gOff = L.globalOffset[bk]!;
      for (let u = 0; u < tk; u++) g[gOff + u] = g[gOff + u]! + gk[u]!;
      for (let l = 0; l < n; l++) {
        const kl = kinds[l]!;
        if (kl === POS_CONSTANT) continue;
        // Only H_ec (eliminated rows, kept columns) is stored, not its transpose.
        if (kk === POS_KEPT && kl === POS_ELIMINATED) continue;
        const bl = ps[l]!;
        const tl = pr.parameterBlock(bl).tangentSize;
        this.selectDestination(kk, kl, bk, bl, hecs[l]!, tk, tl, nc);
        const dest = this.dest;
        const off = this.destOff;
        const stride = this.destStride;
        if (Mk) {
          // B = M_kᵀ T_l (tk x tl)
          const T = Tl[l]!;
          B.fill(0, 0, tk * tl);
          for (let a = 0; a < p; a++) {
            const rowM = a * tk;
            const rowT = a * tl;
            for (let u = 0; u < tk; u++) {
              const mu = Mk[rowM + u]!;
              if (mu === 0) continue;
              const rowB = u * tl;
              for (let v = 0; v < tl; v++) B[rowB + v] = B[rowB + v]! + mu * T[rowT + v]!;
            }
          }
          for (let u = 0; u < tk; u++) {
            const rowD = off + u * stride;
            const rowB = u * tl;
            for (let v = 0; v < tl; v++) dest[rowD + v] = dest[rowD + v]! + B[rowB + v]!;
          }
        } else {
          const cl = cols[l]!;
          for (let u = 0; u < tk; u++) {
            const rowD = off + u * stride;
            const rowA = (ck + u) * p + cl;
            for (let v = 0; v < tl; v++) dest[rowD + v] = dest[rowD + v]! + A[rowA + v]!;
          }
        }
      }
    }
  }

  /** Zeroes fixed coordinates (unit diagonal) and records diag(H). */
  private applyFixedAndDiagonal(): void {
    const pr = this.problem;
    const L = this.layout;
    const nc = L.numKept;
    for (const id of L.keptBlocks) {
      const blk = pr.parameterBlock(id);
      const o = L.globalOffset[id]!;
      for (const f of blk.fixedTangentIndices) {
        const gi = o + f;
        this.g[gi] = 0;
        for (let j = 0; j < nc; j++) {
          this.Hcc[gi * nc + j] = 0;
          this.Hcc[j * nc + gi] = 0;
        }
        this.Hcc[gi * nc + gi] = 1;
      }
    }
    // Only the eliminated blocks that have, or couple to, fixed coordinates need work here (usually none).
    for (const ei of this.ws.elimWithFixed) this.fixEliminated(ei);
    const diag = this.diag;
    const Hee = this.Hee;
    for (let ei = 0; ei < L.elimBlocks.length; ei++) {
      const go = L.globalOffset[L.elimBlocks[ei]!]!;
      const ho = L.heeOffset[ei]!;
      const te = this.ws.elimTangent[ei]!;
      for (let u = 0; u < te; u++) diag[go + u] = Hee[ho + u * te + u]!;
    }
    for (let i = 0; i < nc; i++) this.diag[i] = this.Hcc[i * nc + i]!;
  }

  /** Fixed coordinates of eliminated block ei (unit diagonal, zero gradient and couplings) and its coupled kept blocks' fixed columns in H_ec. */
  private fixEliminated(ei: number): void {
    const pr = this.problem;
    const L = this.layout;
    const id = L.elimBlocks[ei]!;
    const blk = pr.parameterBlock(id);
    const te = blk.tangentSize;
    const ho = L.heeOffset[ei]!;
    const couplings = L.couplings[ei]!;
    const offs = L.hecOffsets[ei]!;
    for (const f of blk.fixedTangentIndices) {
      this.g[L.globalOffset[id]! + f] = 0;
      for (let j = 0; j < te; j++) {
        this.Hee[ho + f * te + j] = 0;
        this.Hee[ho + j * te + f] = 0;
      }
      this.Hee[ho + f * te + f] = 1;
      for (let j = 0; j < couplings.length; j++) {
        const tc = pr.parameterBlock(couplings[j]!).tangentSize;
        this.Hec.fill(0, offs[j]! + f * tc, offs[j]! + (f + 1) * tc);
      }
    }
    for (let j = 0; j < couplings.length; j++) {
      const c = pr.parameterBlock(couplings[j]!);
      if (c.fixedTangentIndices.length === 0) continue;
      const tc = c.tangentSize;
      for (let u = 0; u < te; u++) for (const f of c.fixedTangentIndices) this.Hec[offs[j]! + u * tc + f] = 0;
    }
  }

  /**
   * Forms the reduced system S, rhs for damping λ·D (D over the global tangent
   * vector; pass λ = 0 for the undamped information matrix). Leaves the
   * factors of every H_ee + λD_e for backSubstitute().
   */
  reduce(lambda: number, D: Float64Array): LinearSolveStatus {
    const L = this.layout;
    const nc = L.numKept;
    const S = this.S;
    const rhs = this.rhs;
    const g = this.g;
    S.set(this.Hcc);
    for (let i = 0; i < nc; i++) {
      S[i * nc + i] = S[i * nc + i]! + lambda * D[i]!;
      rhs[i] = -g[i]!;
    }
    // One call per eliminated block (see linearize() on why the loop body is a method).
    const elim6 = this.ws.elim6;
    for (let ei = 0; ei < L.elimBlocks.length; ei++) {
      const col = elim6[ei] === 1 ? this.eliminate6(ei, lambda, D) : this.eliminate(ei, lambda, D);
      if (col >= 0) return { ok: false, reason: 'eliminated_block_not_positive_definite', blockId: L.elimBlocks[ei]!, column: col };
    }
    mirrorUpper(S, nc);
    return { ok: true };
  }

  /**
   * Factors H_ee + λD_e of eliminated block ei into Lee and subtracts its
   * contribution from S and rhs. Returns −1, or the column at which the
   * block is not positive definite.
   */
  private eliminate(ei: number, lambda: number, D: Float64Array): number {
    const pr = this.problem;
    const L = this.layout;
    const nc = L.numKept;
    const rhs = this.rhs;
    const g = this.g;
    const Hec = this.Hec;
    const Hee = this.Hee;
    const Lee = this.Lee;
    const w = this.z;
    const V = this.Y;
    const id = L.elimBlocks[ei]!;
    const te = pr.parameterBlock(id).tangentSize;
    const ho = L.heeOffset[ei]!;
    const go = L.globalOffset[id]!;
    // Factor H_ee + λD_e = L Lᵀ into Lee (lower triangle).
    for (let k = 0; k < te * te; k++) Lee[ho + k] = Hee[ho + k]!;
    for (let u = 0; u < te; u++) Lee[ho + u * te + u] = Lee[ho + u * te + u]! + lambda * D[go + u]!;
    const col = choleskyAt(Lee, ho, te);
    if (col >= 0) return col;
    const idx = this.ws.stackIndex[ei]!;
    const W = idx.length;
    if (W === 0) return -1;
    // w = L⁻¹ g_e and V = L⁻¹ [H_ec_1 … H_ec_n] (te x W, idx = global column of each stacked
    // column). Then H_ecᵀ (L Lᵀ)⁻¹ g_e = Vᵀ w and H_ecᵀ (L Lᵀ)⁻¹ H_ec = Vᵀ V: forward
    // substitution only, and the update of S is a Gram matrix (upper triangle).
    for (let u = 0; u < te; u++) w[u] = g[go + u]!;
    forwardRowsAt(Lee, ho, te, w, 1);
    const couplings = L.couplings[ei]!;
    const offs = L.hecOffsets[ei]!;
    let yOff = 0;
    for (let j = 0; j < couplings.length; j++) {
      const tc = pr.parameterBlock(couplings[j]!).tangentSize;
      const h = offs[j]!;
      for (let u = 0; u < te; u++) for (let v = 0; v < tc; v++) V[u * W + yOff + v] = Hec[h + u * tc + v]!;
      yOff += tc;
    }
    forwardRowsAt(Lee, ho, te, V, W);
    for (let a = 0; a < W; a++) {
      let sum = 0;
      for (let u = 0; u < te; u++) sum += V[u * W + a]! * w[u]!;
      rhs[idx[a]!] = rhs[idx[a]!]! + sum;
    }
    gramSubtract(V, this.P, this.S, idx, W, te, nc);
    return -1;
  }

  /**
   * eliminate() for a 6-dim block whose couplings are all 6-dim (poses, the
   * common case): the factor and w = L⁻¹ g_e in locals, one stacked column of
   * V = L⁻¹ H_ec at a time in registers (stored column by column, so each
   * entry of the Gram update Vᵀ V is a contiguous 6-term dot product).
   */
  private eliminate6(ei: number, lambda: number, D: Float64Array): number {
    const L = this.layout;
    const nc = L.numKept;
    const Hec = this.Hec;
    const Lee = this.Lee;
    const id = L.elimBlocks[ei]!;
    const ho = L.heeOffset[ei]!;
    const go = L.globalOffset[id]!;
    for (let k = 0; k < 36; k++) Lee[ho + k] = this.Hee[ho + k]!;
    for (let u = 0; u < 6; u++) Lee[ho + 7 * u] = Lee[ho + 7 * u]! + lambda * D[go + u]!;
    const col = choleskyAt(Lee, ho, 6);
    if (col >= 0) return col;
    const idx = this.ws.stackIndex[ei]!;
    const W = idx.length;
    if (W === 0) return -1;
    // w = L⁻¹ g_e (in z), then column c of V = L⁻¹ H_ec at V[6c … 6c + 5] with rhs_c += V_cᵀ w.
    const w = this.z;
    forward6(Lee, ho, this.g, go, 1, w, 0);
    const w0 = w[0]!, w1 = w[1]!, w2 = w[2]!, w3 = w[3]!, w4 = w[4]!, w5 = w[5]!;
    const V = this.Y;
    const rhs = this.rhs;
    const offs = L.hecOffsets[ei]!;
    for (let c = 0; c < W; c++) {
      // Column c is column v of coupling j; H_ec_j is 6 x 6 row-major at offs[j].
      const o = 6 * c;
      forward6(Lee, ho, Hec, offs[(c / 6) | 0]! + (c % 6), 6, V, o);
      rhs[idx[c]!] = rhs[idx[c]!]! + V[o]! * w0 + V[o + 1]! * w1 + V[o + 2]! * w2 + V[o + 3]! * w3 + V[o + 4]! * w4 + V[o + 5]! * w5;
    }
    const S = this.S;
    for (let a = 0; a < W; a++) {
      const oa = 6 * a;
      const a0 = V[oa]!, a1 = V[oa + 1]!, a2 = V[oa + 2]!, a3 = V[oa + 3]!, a4 = V[oa + 4]!, a5 = V[oa + 5]!;
      const rowS = idx[a]! * nc;
      for (let c = a; c < W; c++) {
        const oc = 6 * c;
        const dot = a0 * V[oc]! + a1 * V[oc + 1]! + a2 * V[oc + 2]! + a3 * V[oc + 3]! + a4 * V[oc + 4]! + a5 * V[oc + 5]!;
        S[rowS + idx[c]!] = S[rowS + idx[c]!]! - dot;
      }
    }
    return -1;
  }

  /**
   * Solves the damped system (H + λD) δ = −g into `delta` (global tangent
   * vector). A non-positive-definite matrix is reported as a status.
   */
  solve(lambda: number, D: Float64Array, delta: Float64Array): LinearSolveStatus {
    const st = this.reduce(lambda, D);
    if (!st.ok) return st;
    const L = this.layout;
    const nc = L.numKept;
    if (nc > 0) {
      const col = choleskyInPlace(this.S, nc);
      if (col >= 0) return { ok: false, reason: 'reduced_system_not_positive_definite', column: col };
      choleskySolveInPlace(this.S, nc, this.rhs);
    }
    delta.set(this.rhs.subarray(0, nc), 0);
    this.backSubstitute(delta);
    // Fixed coordinates are exactly zero by construction; enforce it against round-off.
    const pr = this.problem;
    for (let id = 0; id < pr.numParameterBlocks; id++) {
      const o = L.globalOffset[id]!;
      if (o < 0) continue;
      for (const f of pr.parameterBlock(id).fixedTangentIndices) delta[o + f] = 0;
    }
    return { ok: true };
  }

  /** δ_e = (H_ee + λD_e)⁻¹ (−g_e − H_ec δ_c), using the factors from reduce(). */
  private backSubstitute(delta: Float64Array): void {
    const pr = this.problem;
    const L = this.layout;
    const w = this.z;
    const elim6 = this.ws.elim6;
    for (let ei = 0; ei < L.elimBlocks.length; ei++) {
      if (elim6[ei] === 1) {
        this.backSubstitute6(ei, delta);
        continue;
      }
      const id = L.elimBlocks[ei]!;
      const te = pr.parameterBlock(id).tangentSize;
      const go = L.globalOffset[id]!;
      const ho = L.heeOffset[ei]!;
      for (let u = 0; u < te; u++) w[u] = -this.g[go + u]!;
      const couplings = L.couplings[ei]!;
      const offs = L.hecOffsets[ei]!;
      for (let j = 0; j < couplings.length; j++) {
        const c = couplings[j]!;
        const tc = pr.parameterBlock(c).tangentSize;
        const oc = L.globalOffset[c]!;
        const h = offs[j]!;
        for (let u = 0; u < te; u++) {
          let s = 0;
          for (let v = 0; v < tc; v++) s += this.Hec[h + u * tc + v]! * delta[oc + v]!;
          w[u] = w[u]! - s;
        }
      }
      solveRowsAt(this.Lee, ho, te, w, 1);
      for (let u = 0; u < te; u++) delta[go + u] = w[u]!;
    }
  }

  /** backSubstitute() for one pose-sized block (see eliminate6): couplings and the 6x6 solve written out. */
  private backSubstitute6(ei: number, delta: Float64Array): void {
    const L = this.layout;
    const Hec = this.Hec;
    const g = this.g;
    const go = L.globalOffset[L.elimBlocks[ei]!]!;
    // y = −g_e − Σ_j H_ec_j δ_j, then (L Lᵀ) x = y: forward (forward6), then backward substitution
    // with the factor from eliminate6().
    const y = this.z;
    for (let u = 0; u < 6; u++) y[u] = -g[go + u]!;
    const couplings = L.couplings[ei]!;
    const offs = L.hecOffsets[ei]!;
    for (let j = 0; j < couplings.length; j++) {
      const oc = L.globalOffset[couplings[j]!]!;
      const d0 = delta[oc]!, d1 = delta[oc + 1]!, d2 = delta[oc + 2]!, d3 = delta[oc + 3]!, d4 = delta[oc + 4]!, d5 = delta[oc + 5]!;
      for (let u = 0, h = offs[j]!; u < 6; u++, h += 6) {
        y[u] = y[u]! - (Hec[h]! * d0 + Hec[h + 1]! * d1 + Hec[h + 2]! * d2 + Hec[h + 3]! * d3 + Hec[h + 4]! * d4 + Hec[h + 5]! * d5);
      }
    }
    const M = this.Lee;
    const o = L.heeOffset[ei]!;
    forward6(M, o, y, 0, 1, y, 0);
    const y0 = y[0]!, y1 = y[1]!, y2 = y[2]!, y3 = y[3]!, y4 = y[4]!, y5 = y[5]!;
    const l00 = M[o]!, l10 = M[o + 6]!, l11 = M[o + 7]!, l20 = M[o + 12]!, l21 = M[o + 13]!, l22 = M[o + 14]!;
    const l30 = M[o + 18]!, l31 = M[o + 19]!, l32 = M[o + 20]!, l33 = M[o + 21]!;
    const l40 = M[o + 24]!, l41 = M[o + 25]!, l42 = M[o + 26]!, l43 = M[o + 27]!, l44 = M[o + 28]!;
    const l50 = M[o + 30]!, l51 = M[o + 31]!, l52 = M[o + 32]!, l53 = M[o + 33]!, l54 = M[o + 34]!, l55 = M[o + 35]!;
    const x5 = y5 / l55;
    const x4 = (y4 - l54 * x5) / l44;
    const x3 = (y3 - l43 * x4 - l53 * x5) / l33;
    const x2 = (y2 - l32 * x3 - l42 * x4 - l52 * x5) / l22;
    const x1 = (y1 - l21 * x2 - l31 * x3 - l41 * x4 - l51 * x5) / l11;
    const x0 = (y0 - l10 * x1 - l20 * x2 - l30 * x3 - l40 * x4 - l50 * x5) / l00;
    delta[go] = x0;
    delta[go + 1] = x1;
    delta[go + 2] = x2;
    delta[go + 3] = x3;
    delta[go + 4] = x4;
    delta[go + 5] = x5;
  }
}
