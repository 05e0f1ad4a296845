/**
 * Reprojection residual block for one view: all detections of one target
 * by one camera in one frame.
 *
 * The point in the camera frame is p_cam = X · P_target with the composed
 * pose X = T_cam_target given as a chain of pose factors,
 *   X = F_1^{s_1} · F_2^{s_2} · … · F_k^{s_k},   s_i ∈ {+1, −1},
 * where each F_i is a parameter block (a pose stored as R row-major + t,
 * left perturbation, see geometry/CONVENTIONS.md) or a constant pose.
 *
 * Factored Jacobian (solver/problem.ts): the inner Jacobian is taken with
 * respect to the left perturbation of X (6 columns), plus the camera's
 * intrinsic parameters when they are free. With L_i the product of the
 * factors left of F_i:
 *   s_i = +1:  L F exp-perturbed → X' = exp(Ad(L_i) δ) X,          M_i =  Ad(L_i)
 *   s_i = −1:  L F⁻¹ exp(−δ) …   → X' = exp(−Ad(L_i F_i⁻¹) δ) X,   M_i = −Ad(L_i F_i⁻¹)
 * so each detection costs one projection and one 2x6 (or 2x(6+n)) Jacobian;
 * the per-view maps are formed once per evaluation.
 *
 * Residuals are whitened: r = (project(p_cam) − uv_observed) / sigma, two
 * per detection, grouped in pairs for the robust loss.
 */
import type { CameraModel } from '../camera/model.js';
import type { ResidualBlock } from '../solver/problem.js';
import type { LossFunction } from '../solver/loss.js';
import { adjoint, adjointCongruence, compose, inverse, poseIdentity, type Pose } from '../geometry/se3.js';
import { reprojectionNormalEquations } from '../pnp/pose-normal.js';

/** A pose stored as 12 numbers: R row-major (9), then t (3). */
export function poseFromBlock(x: Float64Array, out: Pose = poseIdentity()): Pose {
  // Element copies: subarray() would allocate a view per call on the hot path.
  const R = out.R;
  for (let k = 0; k < 9; k++) R[k] = x[k]!;
  out.t[0] = x[9]!;
  out.t[1] = x[10]!;
  out.t[2] = x[11]!;
  return out;
}

export function poseToBlock(T: Pose, out: Float64Array = new Float64Array(12)): Float64Array {
  out.set(T.R, 0);
  out.set(T.t, 9);
  return out;
}

export interface ChainFactor {
  /** Index into the residual block's parameterBlocks, or -1 for a constant pose. */
  param: number;
  /** +1 for F, −1 for F⁻¹. */
  sign: 1 | -1;
  /** The constant pose when param = -1. */
  constant?: Pose;
}

export interface ViewResidualSpec {
  model: CameraModel;
  /** Parameter block ids: the pose blocks of the chain, then the intrinsics block if free. */
  parameterBlocks: number[];
  chain: ChainFactor[];
  /** Index into parameterBlocks of the intrinsics block, or -1 when intrinsics are constant. */
  intrinsicsParam: number;
  /** Constant intrinsics used when intrinsicsParam = -1. */
  intrinsics: Float64Array;
  /** Target points of this view, xyz interleaved (metres, target frame). */
  points: Float64Array;
  /** Observed pixels, uv interleaved. */
  pixels: Float64Array;
  /** 1/sigma per detection (px⁻¹). */
  invSigma: Float64Array;
  loss?: LossFunction;
}

const SCRATCH = {
  X: poseIdentity(),
  L: poseIdentity(),
  F: poseIdentity(),
  tmp: poseIdentity(),
  ad: new Float64Array(36),
  uv: new Float64Array(2),
  pc: new Float64Array(3),
  Jp: new Float64Array(6),
  Ji: new Float64Array(32),
  /** Normal equations in the composed pose's tangent, before the change of inner coordinates. */
  Ax: new Float64Array(36),
  bx: new Float64Array(6),
  /** G_k per chain position (see fillRelativeMaps). */
  G: [] as Pose[],
  Ginv: poseIdentity(),
  pairG: poseIdentity(),
};

export class ViewResidual implements ResidualBlock {
  /** 2 per detection; changes with setDetections(). */
  numResiduals: number;
  readonly parameterBlocks: readonly number[];
  readonly innerSize: number;
  readonly mapped = true;
  loss?: LossFunction;
  readonly lossGroupSize = 2;
  /** The view's data; points, pixels and invSigma are replaced by setDetections(). */
  spec: ViewResidualSpec;
  private readonly nIntr: number;
  // Scratch shared by every block (evaluate is not re-entrant), so that the
  // thousands of blocks of a large problem allocate nothing per instance.
  private readonly X: Pose = SCRATCH.X;
  private readonly L: Pose = SCRATCH.L;
  private readonly F: Pose = SCRATCH.F;
  private readonly tmp: Pose = SCRATCH.tmp;
  private readonly ad = SCRATCH.ad;
  private readonly uv = SCRATCH.uv;
  private readonly pc = SCRATCH.pc;
  private readonly Jp = SCRATCH.Jp;
  private readonly Ji: Float64Array;
  /**
   * Positions of C and F when the chain is C⁻¹ · F with both factors
   * parameter blocks (T_ref_cam⁻¹ · T_ref_target, the moving-target rig),
   * else −1: linearizeInner then composes the pose and its maps inline.
   */
  private readonly pairCam: number;
  private readonly pairTarget: number;
  /** spec.chain with every factor of one shape (constant: null when param ≥ 0), so the hot loops see one object layout. */
  private readonly chain: { param: number; sign: number; constant: Pose | null }[];

  constructor(spec: ViewResidualSpec) {
    this.spec = spec;
    this.chain = spec.chain.map((f) => ({ param: f.param, sign: f.sign, constant: f.constant ?? null }));
    const c = spec.chain;
    const pair = c.length === 2 && c[0]!.sign === -1 && c[1]!.sign === 1 && c[0]!.param >= 0 && c[1]!.param >= 0 && c[0]!.param !== c[1]!.param;
    this.pairCam = pair ? c[0]!.param : -1;
    this.pairTarget = pair ? c[1]!.param : -1;
    this.numResiduals = 2 * (spec.pixels.length / 2);
    this.parameterBlocks = spec.parameterBlocks;
    this.nIntr = spec.intrinsicsParam >= 0 ? spec.model.numParams : 0;
    this.innerSize = 6 + this.nIntr;
    const jiSize = 2 * Math.max(1, spec.model.numParams);
    if (SCRATCH.Ji.length < jiSize) SCRATCH.Ji = new Float64Array(jiSize);
    this.Ji = SCRATCH.Ji;
    if (spec.loss) this.loss = spec.loss;
  }

  /** Sets the robust loss; the engine reads it at each evaluation. */
  setLoss(loss: LossFunction | undefined): void {
    this.loss = loss;
  }

  /**
   * Replaces the view's detections (same camera, target and chain), e.g.
   * without the ones rejected as outliers. The problem holding the block
   * must then be told: problem.residualSizesChanged().
   */
  setDetections(points: Float64Array, pixels: Float64Array, invSigma: Float64Array): void {
    this.spec = { ...this.spec, points, pixels, invSigma };
    this.numResiduals = pixels.length;
  }

  /** Number of detections in the view. */
  get count(): number {
    return this.spec.pixels.length / 2;
  }

  /** Composes X = T_cam_target from the current parameter values. */
  composePose(params: readonly Float64Array[], out: Pose): Pose {
    const chain = this.chain;
    setIdentity(out);
    for (let k = 0; k < chain.length; k++) {
      const f = chain[k]!;
      const F = f.param >= 0 ? poseFromBlock(params[f.param]!, this.F) : f.constant!;
      if (f.sign === 1) compose(out, F, out);
      else compose(out, inverse(F, this.tmp), out);
    }
    return out;
  }

  evaluate(params: readonly Float64Array[], residuals: Float64Array, jacobian: Float64Array | null, maps: Float64Array[] | null): boolean {
    const { model, points, pixels, invSigma, intrinsicsParam } = this.spec;
    const intr = intrinsicsParam >= 0 ? params[intrinsicsParam]! : this.spec.intrinsics;
    const X = this.composePose(params, this.X);
    // Pose entries in locals: stores into `jacobian` could alias them otherwise, forcing reloads per point.
    const R0 = X.R[0]!, R1 = X.R[1]!, R2 = X.R[2]!, R3 = X.R[3]!, R4 = X.R[4]!, R5 = X.R[5]!, R6 = X.R[6]!, R7 = X.R[7]!, R8 = X.R[8]!;
    const t0 = X.t[0]!, t1 = X.t[1]!, t2 = X.t[2]!;
    const n = points.length / 3;
    const inner = this.innerSize;
    const nIntr = this.nIntr;
    const uv = this.uv;
    const pc = this.pc;
    const Jp = this.Jp;
    const Ji = this.Ji;
    for (let i = 0; i < n; i++) {
      const Px = points[3 * i]!, Py = points[3 * i + 1]!, Pz = points[3 * i + 2]!;
      const x = R0 * Px + R1 * Py + R2 * Pz + t0;
      const y = R3 * Px + R4 * Py + R5 * Pz + t1;
      const z = R6 * Px + R7 * Py + R8 * Pz + t2;
      pc[0] = x;
      pc[1] = y;
      pc[2] = z;
      const w = invSigma[i]!;
      if (jacobian === null) {
        if (!model.project(intr, pc, uv)) return false;
      } else {
        if (!model.project(intr, pc, uv, Jp, nIntr > 0 ? Ji : undefined)) return false;
        // J_uv_X = J_uv_p · [−[p]×, I]; −[p]× = [[0, z, −y], [−z, 0, x], [y, −x, 0]]
        const o0 = 2 * i * inner;
        const o1 = o0 + inner;
        const a0 = Jp[0]! * w, a1 = Jp[1]! * w, a2 = Jp[2]! * w;
        const b0 = Jp[3]! * w, b1 = Jp[4]! * w, b2 = Jp[5]! * w;
        jacobian[o0] = -a1 * z + a2 * y;
        jacobian[o0 + 1] = a0 * z - a2 * x;
        jacobian[o0 + 2] = -a0 * y + a1 * x;
        jacobian[o0 + 3] = a0;
        jacobian[o0 + 4] = a1;
        jacobian[o0 + 5] = a2;
        jacobian[o1] = -b1 * z + b2 * y;
        jacobian[o1 + 1] = b0 * z - b2 * x;
        jacobian[o1 + 2] = -b0 * y + b1 * x;
        jacobian[o1 + 3] = b0;
        jacobian[o1 + 4] = b1;
        jacobian[o1 + 5] = b2;
        for (let k = 0; k < nIntr; k++) {
          jacobian[o0 + 6 + k] = Ji[k]! * w;
          jacobian[o1 + 6 + k] = Ji[nIntr + k]! * w;
        }
      }
      residuals[2 * i] = (uv[0]! - pixels[2 * i]!) * w;
      residuals[2 * i + 1] = (uv[1]! - pixels[2 * i + 1]!) * w;
    }
    if (jacobian !== null && maps !== null) this.fillMaps(params, maps);
    return true;
  }

  /**
   * Fused linearisation (ResidualBlock.linearizeInner) for fixed intrinsics
   * (inner size 6): per detection the two Jacobian rows
   *   j = w·J_uv_p[row] · [−[p]×, I] = [a × p, a]  (a = w·J_uv_p[row], p = p_cam),
   * the whitened residuals r = w·(uv − uv_observed) and the loss weight
   * ρ′(r_u² + r_v²) go straight into A_X = Σ ρ′ jᵀj and b_X = Σ ρ′ jᵀr, with
   * respect to the left perturbation of X.
   *
   * The inner coordinates handed to the engine are then those of the last
   * pose block of the chain, r: with its map M_r = s_r Ad(G_r) (G_r as in
   * fillRelativeMaps), A = Ad(G_r)ᵀ A_X Ad(G_r), b = Ad(G_r)ᵀ b_X, and every
   * map becomes M_k' = Ad(G_r)⁻¹ M_k = s_k Ad(G_r⁻¹ G_k). For the usual chain
   * T_ref_cam⁻¹ · T_ref_target both maps are then exactly ±I, so the engine
   * adds A to its blocks without any 6x6 products (schur.ts, scatterPose6).
   * With free intrinsics it returns undefined (the engine uses evaluate()).
   */
  linearizeInner(params: readonly Float64Array[], A: Float64Array, b: Float64Array, maps: Float64Array[] | null, _rho: Float64Array, out: Float64Array): boolean | undefined {
    if (this.nIntr > 0) return undefined;
    const { model, points, pixels, invSigma } = this.spec;
    const intr = this.spec.intrinsics;
    const loss = this.loss;
    const X = this.X;
    if (maps === null) {
      this.composePose(params, X);
      const cost = reprojectionNormalEquations(model, intr, X, points, pixels, invSigma, loss, A, b, null);
      if (cost < 0) return false;
      out[0] = 0.5 * cost;
      return true;
    }
    let G: Pose;
    if (this.pairCam >= 0) G = this.pairPoses(params, X, maps);
    else {
      this.composePose(params, X);
      G = this.fillRelativeMaps(params, maps);
    }
    const cost = reprojectionNormalEquations(model, intr, X, points, pixels, invSigma, loss, SCRATCH.Ax, SCRATCH.bx, null);
    if (cost < 0) return false;
    out[0] = 0.5 * cost;
    adjointCongruence(G, SCRATCH.Ax, SCRATCH.bx, A, b);
    return true;
  }

  /**
   * The chain C⁻¹ · F (see pairCam) in one step: G = C⁻¹ = (R_Cᵀ, −R_Cᵀ t_C),
   * X = G · F = (R_Cᵀ R_F, R_Cᵀ (t_F − t_C)); the maps of C and F are then
   * −I and I (fillRelativeMaps gives the same for this chain). Writes X and
   * returns G.
   */
  private pairPoses(params: readonly Float64Array[], X: Pose, maps: Float64Array[]): Pose {
    const c = params[this.pairCam]!;
    const f = params[this.pairTarget]!;
    const G = SCRATCH.pairG;
    const GR = G.R;
    const XR = X.R;
    for (let i = 0; i < 3; i++) {
      const r0 = c[i]!, r1 = c[3 + i]!, r2 = c[6 + i]!; // row i of R_Cᵀ
      GR[3 * i] = r0;
      GR[3 * i + 1] = r1;
      GR[3 * i + 2] = r2;
      for (let j = 0; j < 3; j++) XR[3 * i + j] = r0 * f[j]! + r1 * f[3 + j]! + r2 * f[6 + j]!;
      G.t[i] = -(r0 * c[9]! + r1 * c[10]! + r2 * c[11]!);
      X.t[i] = r0 * (f[9]! - c[9]!) + r1 * (f[10]! - c[10]!) + r2 * (f[11]! - c[11]!);
    }
    const Mc = maps[this.pairCam]!;
    const Mf = maps[this.pairTarget]!;
    for (let q = 0; q < 36; q++) {
      Mc[q] = 0;
      Mf[q] = 0;
    }
    for (let q = 0; q < 36; q += 7) {
      Mc[q] = -1;
      Mf[q] = 1;
    }
    return G;
  }

  /**
   * Maps for the inner coordinates of the last pose block r of the chain
   * (see linearizeInner). With L_k the product of the factors left of
   * position k, G_k = L_k for s_k = +1 and G_k = L_k F_k⁻¹ for s_k = −1, so
   * that the map of evaluate() is M_k = s_k Ad(G_k). Writes
   * M_k' = s_k Ad(G_r⁻¹ G_k), exactly s_k I when G_k and G_r hold the same
   * numbers, and returns G_r.
   */
  private fillRelativeMaps(params: readonly Float64Array[], maps: Float64Array[]): Pose {
    const chain = this.chain;
    const G = SCRATCH.G;
    while (G.length < chain.length) G.push(poseIdentity());
    const L = setIdentity(this.L);
    let r = -1;
    for (let k = 0; k < chain.length; k++) {
      const f = chain[k]!;
      const F = f.param >= 0 ? poseFromBlock(params[f.param]!, this.F) : f.constant!;
      if (f.sign === 1) {
        if (f.param >= 0) copyPose(L, G[k]!);
        compose(L, F, L);
      } else {
        compose(L, inverse(F, this.tmp), L);
        if (f.param >= 0) copyPose(L, G[k]!);
      }
      if (f.param >= 0) r = k;
    }
    const Gr = G[r]!;
    let GrInverse: Pose | null = null;
    for (let k = 0; k < chain.length; k++) {
      const f = chain[k]!;
      if (f.param < 0) continue;
      const M = maps[f.param]!;
      if (samePose(G[k]!, Gr)) {
        M.fill(0, 0, 36);
        for (let i = 0; i < 6; i++) M[7 * i] = f.sign;
      } else {
        GrInverse ??= inverse(Gr, SCRATCH.Ginv);
        writeMap(M, adjoint(compose(GrInverse, G[k]!, this.tmp), this.ad), f.sign, 6);
      }
    }
    return Gr;
  }

  private fillMaps(params: readonly Float64Array[], maps: Float64Array[]): void {
    const intrinsicsParam = this.spec.intrinsicsParam;
    const chain = this.chain;
    const inner = this.innerSize;
    const L = setIdentity(this.L);
    for (let k = 0; k < chain.length; k++) {
      const f = chain[k]!;
      const F = f.param >= 0 ? poseFromBlock(params[f.param]!, this.F) : f.constant!;
      if (f.sign === 1) {
        if (f.param >= 0) writeMap(maps[f.param]!, adjoint(L, this.ad), 1, inner);
        compose(L, F, L);
      } else {
        compose(L, inverse(F, this.tmp), L);
        if (f.param >= 0) writeMap(maps[f.param]!, adjoint(L, this.ad), -1, inner);
      }
    }
    if (intrinsicsParam >= 0) {
      const M = maps[intrinsicsParam]!;
      const n = this.nIntr;
      M.fill(0);
      for (let k = 0; k < n; k++) M[(6 + k) * n + k] = 1;
    }
  }
}

/** Sets T to the identity in place (no allocation) and returns it. */
function setIdentity(T: Pose): Pose {
  T.R.fill(0);
  T.R[0] = 1;
  T.R[4] = 1;
  T.R[8] = 1;
  T.t.fill(0);
  return T;
}

function copyPose(from: Pose, to: Pose): void {
  for (let k = 0; k < 9; k++) to.R[k] = from.R[k]!;
  to.t[0] = from.t[0]!;
  to.t[1] = from.t[1]!;
  to.t[2] = from.t[2]!;
}

/** True when both poses hold exactly the same 12 numbers. */
function samePose(a: Pose, b: Pose): boolean {
  for (let k = 0; k < 9; k++) if (a.R[k] !== b.R[k]) return false;
  return a.t[0] === b.t[0] && a.t[1] === b.t[1] && a.t[2] === b.t[2];
}

/** Writes sign·Ad (6x6) into the top 6 rows of an inner x 6 map; rows below are zero. */
function writeMap(M: Float64Array, ad: Float64Array, sign: number, inner: number): void {
  M.fill(0, 0, inner * 6);
  for (let i = 0; i < 36; i++) M[i] = sign * ad[i]!;
}
