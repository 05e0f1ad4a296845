/**
 * The generic sparse least-squares problem. This module knows parameter
 * blocks, residual blocks, manifolds and loss functions; it never learns
 * what a block means (camera, frame, target, curve coefficient).
 *
 * Objective: minimise ½ Σ_g ρ(‖r_g‖²) over the residual groups g of every
 * residual block (a block's residuals are split into consecutive groups of
 * `lossGroupSize`; ρ is the block's loss, identity when none).
 */
import type { LossFunction } from './loss.js';

/** A smooth update rule x ⊞ δ on a parameter block's ambient storage. */
export interface Manifold {
  /** Length of the ambient storage (e.g. 12 for a pose stored as R row-major + t). */
  readonly ambientSize: number;
  /** Length of a perturbation δ (e.g. 6 for a pose). */
  readonly tangentSize: number;
  /** out = x ⊞ δ. out may alias x. */
  plus(x: Float64Array, delta: Float64Array, out: Float64Array): void;
}

export interface ParameterBlockSpec {
  /** Initial values (ambient storage). The problem keeps this array and updates it in place. */
  values: Float64Array;
  /** Update rule; defaults to Euclidean of size values.length. */
  manifold?: Manifold;
  /** Held fixed entirely (e.g. the reference camera: the gauge). */
  constant?: boolean;
  /** Tangent coordinates held fixed (e.g. k3 of a camera's intrinsics); their δ is always 0 and their variance reported as 0. */
  fixedTangentIndices?: readonly number[];
  /**
   * Eliminate this block by the Schur complement. Precondition: no residual
   * block touches two eliminated blocks, so the eliminated part of the normal
   * matrix is block diagonal.
   */
  eliminate?: boolean;
  /** Free text for messages (e.g. "camera left_side"); the solver only prints it. */
  label?: string;
}

/**
 * A residual block r(x_1, …, x_k) with an analytic Jacobian supplied in
 * factored form: ∂r/∂δ_k = J_inner · M_k, where J_inner is m x innerSize
 * and M_k is innerSize x tangentSize_k. This lets a block whose residuals
 * depend on its parameters only through a small shared quantity (for
 * instance one composed pose per view) hand over one m x 6 Jacobian; the
 * engine forms J_innerᵀJ_inner once per block and maps it onto the
 * parameter blocks with the small M_k.
 *
 * When `mapped` is false, innerSize must equal Σ tangentSize_k and the
 * columns of J_inner are the parameter blocks' tangents concatenated in
 * the order of `parameterBlocks` (M_k = column selection); `maps` is then
 * passed as null.
 */
export interface ResidualBlock {
  /** Number of scalar residuals m. */
  readonly numResiduals: number;
  /** Parameter block ids, in the order evaluate() receives their values. */
  readonly parameterBlocks: readonly number[];
  /** Columns of the inner Jacobian. */
  readonly innerSize: number;
  /** See the interface comment. */
  readonly mapped: boolean;
  /** Robust loss applied per group; undefined means plain least squares. */
  readonly loss?: LossFunction;
  /** Residuals per loss group (e.g. 2 for one pixel); defaults to numResiduals. m must be a multiple. */
  readonly lossGroupSize?: number;
  /**
   * Fills residuals (m). When jacobian is non-null also fills the inner
   * Jacobian (m x innerSize, row-major) and, when mapped, maps[k]
   * (innerSize x tangentSize_k, row-major) for every parameter block.
   * Returns false when the residual cannot be evaluated at these values
   * (e.g. a point behind a camera); the engine then rejects the step.
   */
  evaluate(
    params: readonly Float64Array[],
    residuals: Float64Array,
    jacobian: Float64Array | null,
    maps: Float64Array[] | null,
  ): boolean;
  /**
   * Optional fused linearisation, for blocks with many residuals: the same
   * numbers as evaluate() with a Jacobian followed by the engine's loss
   * weighting (IRLS, loss.ts) and normal products, without storing J:
   *   A = Σ_g ρ′_g J_gᵀJ_g (innerSize², row-major, full),  b = Σ_g ρ′_g J_gᵀ r_g,
   *   out[0] = ½ Σ_g ρ(‖r_g‖²)  (ρ(s) = s, ρ′ = 1 without a loss; a group with ρ′ ≤ 0 adds nothing),
   * and maps as in evaluate(). `rho` is scratch of length ≥ 3 for loss.evaluate.
   * Returns false when evaluate() would, or undefined when the block cannot
   * take this path for its current configuration (the engine then uses evaluate()).
   */
  linearizeInner?(
    params: readonly Float64Array[],
    A: Float64Array,
    b: Float64Array,
    maps: Float64Array[] | null,
    rho: Float64Array,
    out: Float64Array,
  ): boolean | undefined;
}
