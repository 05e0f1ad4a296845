/**
 * First-order covariance at the current values, plus residual helpers.
 *
 * Information matrix: H = J̃ᵀJ̃ with the loss-weighted Jacobian (IRLS weights
 * √ρ′ per group, as in the solve; identical to JᵀJ without a loss), no
 * damping. Eliminated blocks are removed by the Schur complement,
 *   S = H_cc − Σ_e H_ecᵀ H_ee⁻¹ H_ec,
 * whose inverse is exactly the joint marginal covariance of all kept
 * (non-constant, non-eliminated) blocks: Σ_cc = S⁻¹. The returned matrix is
 * NOT multiplied by sigma0²; scale it by `sigma0Squared` for an a-posteriori
 * covariance (the rig layer decides).
 *
 * Before inverting, S restricted to the free coordinates is scaled to unit
 * diagonal, C = Δ^{-1/2} S Δ^{-1/2} with Δ = diag(S), and eigen-decomposed.
 * When λ_min(C)/λ_max(C) < minReciprocalCondition the result is a status
 * naming the blocks and tangent indices with large weight in the
 * near-null eigenvectors; there is no silent pseudo-inverse.
 *
 * The marginal covariance of one eliminated block is available on request
 * (Covariance.eliminatedBlock) from the block-inverse formula.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { spdInverse } from '../linalg/small.js';
import type { Problem } from './problem-builder.js';
import { NormalEquations } from './schur.js';

export interface CovarianceOptions {
  /** Fail when λ_min/λ_max of the unit-diagonal reduced information matrix is below this. Default 1e-14. */
  minReciprocalCondition?: number;
}

export interface PoorlyConstrained {
  blockId: number;
  label: string;
  tangentIndices: number[];
}

export type CovarianceResult =
  | { ok: true; covariance: Covariance }
  | {
      ok: false;
      reason: 'evaluation_failed' | 'rank_deficient' | 'ill_conditioned' | 'eliminated_block_singular' | 'no_free_parameters';
      message: string;
      /** Blocks and tangent indices that are poorly constrained (largest components of the near-null eigenvectors). */
      poorlyConstrained: PoorlyConstrained[];
      /** λ_min/λ_max of the unit-diagonal reduced information matrix (NaN if not computed). */
      reciprocalCondition: number;
      /** Number of eigenvalues below minReciprocalCondition · λ_max. */
      nullSpaceDimension: number;
      sigma0Squared: number;
      numResiduals: number;
      numFreeParameters: number;
    };

/** Joint covariance of the kept blocks (unscaled by sigma0², see the file comment). */
export class Covariance {
  constructor(
    private readonly problem: Problem,
    /** Row-major nc x nc over the kept blocks' tangents (global kept offsets); fixed coordinates have zero rows/columns. */
    readonly matrix: Float64Array,
    readonly size: number,
    /** Σ (whitened residual)², without loss, divided by (m − n); NaN when m ≤ n. */
    readonly sigma0Squared: number,
    readonly numResiduals: number,
    readonly numFreeParameters: number,
    readonly reciprocalCondition: number,
    /** Undamped normal equations at the covariance point, kept for eliminatedBlock(). */
    private readonly ne: NormalEquations,
  ) {}

  /**
   * Marginal covariance of an eliminated block e (te x te row-major):
   *   Σ_ee = H_ee⁻¹ + Y Σ_cc Yᵀ,  Y = H_ee⁻¹ H_ec,
   * the (e, e) block of the full inverse by the block-inverse formula;
   * fixed tangent coordinates get zero rows and columns.
   */
  eliminatedBlock(id: number): Float64Array {
    const L = this.problem.layout();
    const ei = L.elimIndex[id] ?? -1;
    if (ei < 0) throw new RangeError(`covariance: parameter block "${this.problem.labelOf(id)}" is not eliminated; use block()`);
    const blk = this.problem.parameterBlock(id);
    const te = blk.tangentSize;
    const ho = L.heeOffset[ei]!;
    const Hinv = spdInverse(this.ne.Hee.subarray(ho, ho + te * te), te);
    if (!Hinv) throw new RangeError(`covariance: eliminated block "${blk.label}" has a singular information matrix`);
    const couplings = L.couplings[ei]!;
    const offs = L.hecOffsets[ei]!;
    const idx: number[] = [];
    const cols: { off: number; tc: number; j: number }[] = [];
    couplings.forEach((c, j) => {
      const tc = this.problem.parameterBlock(c).tangentSize;
      cols.push({ off: L.globalOffset[c]!, tc, j });
      for (let v = 0; v < tc; v++) idx.push(L.globalOffset[c]! + v);
    });
    const W = idx.length;
    // Hs = [H_ec_1 … H_ec_n] (te x W); Y = H_ee⁻¹ Hs.
    const Hs = new Float64Array(te * W);
    let y0 = 0;
    for (const { tc, j } of cols) {
      for (let u = 0; u < te; u++) for (let v = 0; v < tc; v++) Hs[u * W + y0 + v] = this.ne.Hec[offs[j]! + u * tc + v]!;
      y0 += tc;
    }
    const Y = new Float64Array(te * W);
    for (let u = 0; u < te; u++)
      for (let v = 0; v < W; v++) {
        let s = 0;
        for (let q = 0; q < te; q++) s += Hinv[u * te + q]! * Hs[q * W + v]!;
        Y[u * W + v] = s;
      }
    // Z = Y Σ_cc[idx, idx]  (te x W)
    const Z = new Float64Array(te * W);
    for (let u = 0; u < te; u++)
      for (let v = 0; v < W; v++) {
        let s = 0;
        for (let a = 0; a < W; a++) s += Y[u * W + a]! * this.matrix[idx[a]! * this.size + idx[v]!]!;
        Z[u * W + v] = s;
      }
    const out = new Float64Array(te * te);
    for (let u = 0; u < te; u++)
      for (let w = 0; w < te; w++) {
        let s = Hinv[u * te + w]!;
        for (let v = 0; v < W; v++) s += Z[u * W + v]! * Y[w * W + v]!;
        out[u * te + w] = blk.fixedMask[u] || blk.fixedMask[w] ? 0 : s;
      }
    return out;
  }

  private offsetOf(id: number): number {
    const o = this.problem.layout().globalOffset[id] ?? -1;
    if (o < 0 || o >= this.size) {
      throw new RangeError(`covariance: parameter block "${this.problem.labelOf(id)}" is constant or eliminated; no joint covariance is kept for it`);
    }
    return o;
  }

  /** Covariance of block id: t x t row-major. */
  block(id: number): Float64Array {
    return this.cross(id, id);
  }

  /** Cross-covariance E[δ_i δ_jᵀ]: t_i x t_j row-major. */
  cross(i: number, j: number): Float64Array {
    const oi = this.offsetOf(i);
    const oj = this.offsetOf(j);
    const ti = this.problem.parameterBlock(i).tangentSize;
    const tj = this.problem.parameterBlock(j).tangentSize;
    const out = new Float64Array(ti * tj);
    for (let a = 0; a < ti; a++) for (let b = 0; b < tj; b++) out[a * tj + b] = this.matrix[(oi + a) * this.size + oj + b]!;
    return out;
  }
}

/** Residual vectors of every residual block at the current values (no loss applied); null entries where evaluation failed. */
export function evaluateResidualBlocks(problem: Problem): (Float64Array | null)[] {
  const out: (Float64Array | null)[] = [];
  for (let i = 0; i < problem.numResidualBlocks; i++) {
    const rb = problem.residualBlock(i);
    const r = new Float64Array(rb.numResiduals);
    out.push(rb.evaluate(problem.residualParams(i), r, null, null) ? r : null);
  }
  return out;
}

/** Cost ½ Σ_g ρ(‖r_g‖²) at the current values; NaN when a block cannot be evaluated. */
export function problemCost(problem: Problem): number {
  const ne = new NormalEquations(problem);
  const st = ne.evaluateCost();
  return st.ok ? ne.cost : NaN;
}

/** Computes the joint covariance of the kept blocks (see file comment). */
export function computeCovariance(problem: Problem, options: CovarianceOptions = {}): CovarianceResult {
  const minRc = options.minReciprocalCondition ?? 1e-14;
  const L = problem.layout();
  const m = L.numResiduals;
  const n = L.numFree;
  // sigma0² from plain (no-loss) residuals.
  let ss = 0;
  for (const r of evaluateResidualBlocks(problem)) {
    if (!r) {
      ss = NaN;
      break;
    }
    for (let i = 0; i < r.length; i++) ss += r[i]! * r[i]!;
  }
  const sigma0Squared = m > n ? ss / (m - n) : NaN;
  const fail = (
    reason: Exclude<CovarianceResult, { ok: true }>['reason'],
    message: string,
    poorlyConstrained: PoorlyConstrained[] = [],
    reciprocalCondition = NaN,
    nullSpaceDimension = 0,
  ): CovarianceResult => ({ ok: false, reason, message, poorlyConstrained, reciprocalCondition, nullSpaceDimension, sigma0Squared, numResiduals: m, numFreeParameters: n });

  const ne = new NormalEquations(problem);
  const lin = ne.linearize();
  if (!lin.ok) return fail('evaluation_failed', `residual block #${lin.residualBlock} could not be evaluated`);
  const st = ne.reduce(0, new Float64Array(L.numTangent));
  if (!st.ok) {
    if (st.reason === 'eliminated_block_not_positive_definite') {
      const b = problem.parameterBlock(st.blockId);
      return fail(
        'eliminated_block_singular',
        `eliminated block "${b.label}" has a singular information matrix (tangent index ${st.column}); it is not constrained by its residuals`,
        [{ blockId: st.blockId, label: b.label, tangentIndices: [st.column] }],
      );
    }
  }
  // Free kept coordinates.
  const nc = L.numKept;
  const free: { gi: number; blockId: number; t: number }[] = [];
  for (const id of L.keptBlocks) {
    const b = problem.parameterBlock(id);
    const o = L.globalOffset[id]!;
    for (let t = 0; t < b.tangentSize; t++) if (!b.fixedMask[t]) free.push({ gi: o + t, blockId: id, t });
  }
  const nf = free.length;
  const matrix = new Float64Array(nc * nc);
  if (nf === 0) return { ok: true, covariance: new Covariance(problem, matrix, nc, sigma0Squared, m, n, 1, ne) };
  const group = (idx: number[]): PoorlyConstrained[] => {
    const byBlock = new Map<number, number[]>();
    for (const k of idx) {
      const f = free[k]!;
      if (!byBlock.has(f.blockId)) byBlock.set(f.blockId, []);
      byBlock.get(f.blockId)!.push(f.t);
    }
    return [...byBlock].map(([blockId, ts]) => ({ blockId, label: problem.labelOf(blockId), tangentIndices: [...new Set(ts)].sort((a, b) => a - b) }));
  };
  const describe = (pc: PoorlyConstrained[]) => pc.map((p) => `"${p.label}" [${p.tangentIndices.join(', ')}]`).join(', ');
  // Unconstrained coordinates (zero or negative diagonal) cannot be scaled.
  const S = ne.S;
  const zeroDiag: number[] = [];
  let maxDiag = 0;
  for (let k = 0; k < nf; k++) maxDiag = Math.max(maxDiag, S[free[k]!.gi * nc + free[k]!.gi]!);
  for (let k = 0; k < nf; k++) if (!(S[free[k]!.gi * nc + free[k]!.gi]! > maxDiag * 1e-300)) zeroDiag.push(k);
  if (zeroDiag.length) {
    const pc = group(zeroDiag);
    return fail('rank_deficient', `${zeroDiag.length} coordinate(s) receive no information from any residual: ${describe(pc)}`, pc, 0, zeroDiag.length);
  }
  const scale = new Float64Array(nf);
  for (let k = 0; k < nf; k++) scale[k] = 1 / Math.sqrt(S[free[k]!.gi * nc + free[k]!.gi]!);
  const C = new Float64Array(nf * nf);
  for (let a = 0; a < nf; a++) {
    for (let b = 0; b < nf; b++) {
      // Symmetrise: the Schur update accumulates both triangles separately.
      const v = 0.5 * (S[free[a]!.gi * nc + free[b]!.gi]! + S[free[b]!.gi * nc + free[a]!.gi]!);
      C[a * nf + b] = v * scale[a]! * scale[b]!;
    }
  }
  const rows: number[][] = [];
  for (let a = 0; a < nf; a++) rows.push(Array.from(C.subarray(a * nf, (a + 1) * nf)));
  const eig = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true });
  const ev = eig.realEigenvalues;
  const V = eig.eigenvectorMatrix;
  let lmax = -Infinity;
  let lmin = Infinity;
  for (const v of ev) {
    lmax = Math.max(lmax, v);
    lmin = Math.min(lmin, v);
  }
  const rc = lmax > 0 ? lmin / lmax : 0;
  if (!(rc >= minRc)) {
    const weak: number[] = [];
    let dim = 0;
    ev.forEach((v, j) => {
      if (v >= minRc * lmax) return;
      dim++;
      let big = 0;
      for (let a = 0; a < nf; a++) big = Math.max(big, Math.abs(V.get(a, j)));
      for (let a = 0; a < nf; a++) if (Math.abs(V.get(a, j)) >= 0.25 * big) weak.push(a);
    });
    const pc = group(weak);
    const reason = rc <= 0 || rc < 1e-15 * nf ? 'rank_deficient' : 'ill_conditioned';
    return fail(
      reason,
      `${dim}-dimensional ${reason === 'rank_deficient' ? 'null space' : 'near-null space'} of the information matrix (reciprocal condition ${rc.toExponential(3)} < ${minRc}); poorly constrained: ${describe(pc)}; is a gauge block held constant?`,
      pc,
      rc,
      dim,
    );
  }
  const Cinv = spdInverse(C, nf);
  if (!Cinv) {
    return fail('ill_conditioned', `information matrix is not numerically positive definite (reciprocal condition ${rc.toExponential(3)})`, [], rc, 0);
  }
  for (let a = 0; a < nf; a++) {
    for (let b = 0; b < nf; b++) matrix[free[a]!.gi * nc + free[b]!.gi] = Cinv[a * nf + b]! * scale[a]! * scale[b]!;
  }
  return { ok: true, covariance: new Covariance(problem, matrix, nc, sigma0Squared, m, n, rc, ne) };
}
