/**
 * The `Problem` container: parameter blocks, residual blocks, validation and
 * the index layout the engine uses (which blocks are kept in the reduced
 * system, which are eliminated by the Schur complement, where every block's
 * tangent lives in the global step vector).
 *
 * Global tangent vector (length N = nc + ne): the kept blocks (non-constant,
 * not eliminated) first, in insertion order, occupying [0, nc); then the
 * eliminated blocks in insertion order. Constant blocks have no entries.
 */
import { InputError, type InputIssue } from '../errors.js';
import type { ResidualBlock, Manifold, ParameterBlockSpec } from './problem.js';

/** Plain vector space ℝⁿ: x ⊞ δ = x + δ. */
export function euclideanManifold(n: number): Manifold {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`euclideanManifold: n = ${n} violates integer n ≥ 1`);
  return {
    ambientSize: n,
    tangentSize: n,
    plus(x: Float64Array, delta: Float64Array, out: Float64Array): void {
      for (let i = 0; i < n; i++) out[i] = x[i]! + delta[i]!;
    },
  };
}

/** Internal record of one parameter block. */
export interface ParameterBlockEntry {
  readonly id: number;
  readonly values: Float64Array;
  readonly manifold: Manifold;
  readonly tangentSize: number;
  readonly constant: boolean;
  /** Eliminated by the Schur complement (false for constant blocks). */
  readonly eliminate: boolean;
  /** fixedMask[i] = 1 when tangent coordinate i is held fixed. */
  readonly fixedMask: Uint8Array;
  readonly fixedTangentIndices: readonly number[];
  readonly label: string;
}

/** Where position k of a residual block goes in the normal equations. */
export const POS_CONSTANT = 0;
export const POS_KEPT = 1;
export const POS_ELIMINATED = 2;

/** Index layout computed once per problem structure (see file comment). */
export interface ProblemLayout {
  /** Global tangent size N and kept part nc. */
  readonly numTangent: number;
  readonly numKept: number;
  /** Per parameter block id: offset in the global tangent vector, −1 for constant blocks. */
  readonly globalOffset: Int32Array;
  /** Per parameter block id: index among eliminated blocks, −1 otherwise. */
  readonly elimIndex: Int32Array;
  readonly keptBlocks: readonly number[];
  readonly elimBlocks: readonly number[];
  /** Per eliminated block: offset of its H_ee (te x te) in the flat H_ee buffer. */
  readonly heeOffset: Int32Array;
  readonly heeTotal: number;
  /** Per eliminated block: kept block ids it couples to (sorted) and offsets of H_ec (te x tc) in the flat H_ec buffer. */
  readonly couplings: readonly Int32Array[];
  readonly hecOffsets: readonly Int32Array[];
  readonly hecTotal: number;
  /** Per residual block, per position: POS_* kind. */
  readonly posKind: readonly Uint8Array[];
  /** Per residual block, per position: first column in the unmapped inner Jacobian. */
  readonly posColumn: readonly Int32Array[];
  /** Per residual block, per position: H_ec offset when this is a kept position in a block with an eliminated position, else −1. */
  readonly posHec: readonly Int32Array[];
  /** Per residual block: the eliminated position, or −1. */
  readonly elimPosition: Int32Array;
  /** Largest numResiduals, innerSize, tangent size, and Σ_c tc over one eliminated block's couplings. */
  readonly maxResiduals: number;
  readonly maxInner: number;
  readonly maxTangent: number;
  readonly maxCouplingWidth: number;
  /** Σ numResiduals (m) and number of free tangent coordinates (n). */
  readonly numResiduals: number;
  readonly numFree: number;
}

/**
 * A sparse nonlinear least-squares problem (see problem.ts for the objective).
 * Parameter blocks keep the caller's `values` array and are updated in place.
 */
export class Problem {
  private readonly blocks: ParameterBlockEntry[] = [];
  private readonly residuals: ResidualBlock[] = [];
  private readonly params: (readonly Float64Array[])[] = [];
  private cachedLayout: ProblemLayout | null = null;
  private sizeVersion = 0;

  get numParameterBlocks(): number {
    return this.blocks.length;
  }
  get numResidualBlocks(): number {
    return this.residuals.length;
  }
  parameterBlock(id: number): ParameterBlockEntry {
    const b = this.blocks[id];
    if (!b) throw new RangeError(`parameter block id ${id} out of range [0, ${this.blocks.length})`);
    return b;
  }
  residualBlock(id: number): ResidualBlock {
    const r = this.residuals[id];
    if (!r) throw new RangeError(`residual block id ${id} out of range [0, ${this.residuals.length})`);
    return r;
  }
  /** The value arrays residual block `id` is evaluated with, in its parameter order. */
  residualParams(id: number): readonly Float64Array[] {
    return this.params[id]!;
  }
  /** Label for messages: the spec's label or "block #id". */
  labelOf(id: number): string {
    return this.blocks[id]?.label ?? `block #${id}`;
  }

  /**
   * Adds a parameter block and returns its id (0, 1, 2, … in insertion order).
   * Throws InputError 'solver.invalid_problem' listing every problem with the spec.
   */
  addParameterBlock(spec: ParameterBlockSpec): number {
    const id = this.blocks.length;
    const label = spec.label ?? `block #${id}`;
    const issues: InputIssue[] = [];
    const manifold = spec.manifold ?? (spec.values.length > 0 ? euclideanManifold(spec.values.length) : undefined);
    if (!(spec.values instanceof Float64Array)) issues.push({ path: label, message: 'values must be a Float64Array' });
    if (!manifold) {
      issues.push({ path: label, message: 'values is empty and no manifold is given' });
    } else {
      if (manifold.ambientSize !== spec.values.length)
        issues.push({ path: label, message: `values.length = ${spec.values.length} but manifold.ambientSize = ${manifold.ambientSize}` });
      if (!Number.isInteger(manifold.tangentSize) || manifold.tangentSize < 1)
        issues.push({ path: label, message: `manifold.tangentSize = ${manifold.tangentSize} violates integer ≥ 1` });
    }
    const tangentSize = manifold?.tangentSize ?? 0;
    const fixed = spec.fixedTangentIndices ?? [];
    const mask = new Uint8Array(Math.max(tangentSize, 0));
    for (const i of fixed) {
      if (!Number.isInteger(i) || i < 0 || i >= tangentSize)
        issues.push({ path: label, message: `fixedTangentIndices contains ${i}, outside [0, ${tangentSize})` });
      else mask[i] = 1;
    }
    for (let i = 0; i < spec.values.length; i++) {
      if (!Number.isFinite(spec.values[i]!)) {
        issues.push({ path: `${label}.values[${i}]`, message: `initial value ${spec.values[i]} is not finite` });
        break;
      }
    }
    if (issues.length) throw new InputError('solver.invalid_problem', issues);
    this.blocks.push({
      id,
      values: spec.values,
      manifold: manifold!,
      tangentSize,
      constant: spec.constant === true,
      eliminate: spec.eliminate === true && spec.constant !== true,
      fixedMask: mask,
      fixedTangentIndices: [...new Set(fixed)].sort((a, b) => a - b),
      label,
    });
    this.cachedLayout = null;
    return id;
  }

  /**
   * Adds a residual block and returns its id. Checks the ids, sizes, the loss
   * group size and the Schur precondition (at most one eliminated block per
   * residual block); throws InputError 'solver.invalid_problem' with all issues.
   */
  addResidualBlock(block: ResidualBlock): number {
    const id = this.residuals.length;
    const where = `residual block #${id}`;
    const issues: InputIssue[] = [];
    const m = block.numResiduals;
    if (!Number.isInteger(m) || m < 1) issues.push({ path: where, message: `numResiduals = ${m} violates integer ≥ 1` });
    if (!Number.isInteger(block.innerSize) || block.innerSize < 1)
      issues.push({ path: where, message: `innerSize = ${block.innerSize} violates integer ≥ 1` });
    const g = block.lossGroupSize ?? m;
    if (!Number.isInteger(g) || g < 1 || m % g !== 0)
      issues.push({ path: where, message: `lossGroupSize = ${g} must be an integer ≥ 1 dividing numResiduals = ${m}` });
    if (block.parameterBlocks.length === 0) issues.push({ path: where, message: 'parameterBlocks is empty' });
    const seen = new Set<number>();
    let tangentSum = 0;
    const eliminated: number[] = [];
    for (const p of block.parameterBlocks) {
      const b = this.blocks[p];
      if (!b) {
        issues.push({ path: where, message: `parameter block id ${p} does not exist (have ${this.blocks.length})` });
        continue;
      }
      if (seen.has(p)) issues.push({ path: where, message: `parameter block "${b.label}" appears twice` });
      seen.add(p);
      tangentSum += b.tangentSize;
      if (b.eliminate) eliminated.push(p);
    }
    if (!block.mapped && issues.length === 0 && tangentSum !== block.innerSize)
      issues.push({
        path: where,
        message: `unmapped block: innerSize = ${block.innerSize} must equal Σ tangentSize = ${tangentSum}`,
      });
    if (eliminated.length > 1)
      issues.push({
        path: where,
        message: `touches ${eliminated.length} eliminated blocks (${eliminated.map((e) => `"${this.labelOf(e)}"`).join(', ')}); the Schur complement needs at most one`,
        hint: 'eliminate only one of these parameter groups',
      });
    if (issues.length) throw new InputError('solver.invalid_problem', issues);
    this.residuals.push(block);
    this.params.push(block.parameterBlocks.map((p) => this.blocks[p]!.values));
    this.cachedLayout = null;
    return id;
  }

  /**
   * Incremented by residualSizesChanged(): buffers sized by numResiduals
   * (the engine's per-layout workspace) compare it to know when to refresh.
   */
  get residualSizeVersion(): number {
    return this.sizeVersion;
  }

  /**
   * Call after residual blocks changed their numResiduals in place (a view
   * that lost rejected detections, say), with the same parameter blocks in
   * the same order: updates the layout's residual counts without rebuilding
   * it. Throws InputError 'solver.invalid_problem' when a block now has no
   * residuals or a count its loss group size does not divide.
   */
  residualSizesChanged(): void {
    const issues: InputIssue[] = [];
    let maxResiduals = 1;
    let numResiduals = 0;
    for (let id = 0; id < this.residuals.length; id++) {
      const rb = this.residuals[id]!;
      const m = rb.numResiduals;
      const g = rb.lossGroupSize ?? m;
      if (!Number.isInteger(m) || m < 1) issues.push({ path: `residual block #${id}`, message: `numResiduals = ${m} violates integer ≥ 1` });
      else if (m % g !== 0) issues.push({ path: `residual block #${id}`, message: `lossGroupSize = ${g} must divide numResiduals = ${m}` });
      maxResiduals = Math.max(maxResiduals, m);
      numResiduals += m;
    }
    if (issues.length) throw new InputError('solver.invalid_problem', issues);
    this.sizeVersion++;
    const L = this.cachedLayout as { maxResiduals: number; numResiduals: number } | null;
    if (L) {
      L.maxResiduals = maxResiduals;
      L.numResiduals = numResiduals;
    }
  }

  /** The index layout (computed once per structure; recomputed after additions). */
  layout(): ProblemLayout {
    if (!this.cachedLayout) this.cachedLayout = this.buildLayout();
    return this.cachedLayout;
  }

  private buildLayout(): ProblemLayout {
    const nb = this.blocks.length;
    const globalOffset = new Int32Array(nb).fill(-1);
    const elimIndex = new Int32Array(nb).fill(-1);
    const keptBlocks: number[] = [];
    const elimBlocks: number[] = [];
    let off = 0;
    let maxTangent = 1;
    let numFree = 0;
    for (const b of this.blocks) {
      maxTangent = Math.max(maxTangent, b.tangentSize);
      if (b.constant || b.eliminate) continue;
      keptBlocks.push(b.id);
      globalOffset[b.id] = off;
      off += b.tangentSize;
    }
    const numKept = off;
    let heeTotal = 0;
    const heeOffsetArr: number[] = [];
    for (const b of this.blocks) {
      if (!b.eliminate) continue;
      elimIndex[b.id] = elimBlocks.length;
      elimBlocks.push(b.id);
      globalOffset[b.id] = off;
      off += b.tangentSize;
      heeOffsetArr.push(heeTotal);
      heeTotal += b.tangentSize * b.tangentSize;
    }
    for (const b of this.blocks) {
      if (b.constant) continue;
      for (let i = 0; i < b.tangentSize; i++) if (!b.fixedMask[i]) numFree++;
    }
    // Couplings: eliminated block → sorted kept block ids.
    const coupleSets: Set<number>[] = elimBlocks.map(() => new Set<number>());
    const elimPosition = new Int32Array(this.residuals.length).fill(-1);
    let maxResiduals = 1;
    let maxInner = 1;
    let numResiduals = 0;
    this.residuals.forEach((rb, r) => {
      maxResiduals = Math.max(maxResiduals, rb.numResiduals);
      maxInner = Math.max(maxInner, rb.innerSize);
      numResiduals += rb.numResiduals;
      const ps = rb.parameterBlocks;
      for (let k = 0; k < ps.length; k++) if (this.blocks[ps[k]!]!.eliminate) elimPosition[r] = k;
      const ep = elimPosition[r]!;
      if (ep < 0) return;
      const set = coupleSets[elimIndex[ps[ep]!]!]!;
      for (const p of ps) {
        const b = this.blocks[p]!;
        if (!b.constant && !b.eliminate) set.add(p);
      }
    });
    const couplings: Int32Array[] = [];
    const hecOffsets: Int32Array[] = [];
    let hecTotal = 0;
    let maxCouplingWidth = 1;
    elimBlocks.forEach((e, ei) => {
      const list = Int32Array.from([...coupleSets[ei]!].sort((a, b) => globalOffset[a]! - globalOffset[b]!));
      const te = this.blocks[e]!.tangentSize;
      const offs = new Int32Array(list.length);
      let width = 0;
      list.forEach((c, j) => {
        offs[j] = hecTotal;
        const tc = this.blocks[c]!.tangentSize;
        hecTotal += te * tc;
        width += tc;
      });
      maxCouplingWidth = Math.max(maxCouplingWidth, width);
      couplings.push(list);
      hecOffsets.push(offs);
    });
    const posKind: Uint8Array[] = [];
    const posColumn: Int32Array[] = [];
    const posHec: Int32Array[] = [];
    this.residuals.forEach((rb, r) => {
      const ps = rb.parameterBlocks;
      const kind = new Uint8Array(ps.length);
      const col = new Int32Array(ps.length);
      const hec = new Int32Array(ps.length).fill(-1);
      let c0 = 0;
      const ep = elimPosition[r]!;
      for (let k = 0; k < ps.length; k++) {
        const b = this.blocks[ps[k]!]!;
        kind[k] = b.constant ? POS_CONSTANT : b.eliminate ? POS_ELIMINATED : POS_KEPT;
        col[k] = c0;
        c0 += b.tangentSize;
        if (ep >= 0 && kind[k] === POS_KEPT) {
          const ei = elimIndex[ps[ep]!]!;
          const j = couplings[ei]!.indexOf(ps[k]!);
          hec[k] = hecOffsets[ei]![j]!;
        }
      }
      posKind.push(kind);
      posColumn.push(col);
      posHec.push(hec);
    });
    return {
      numTangent: off,
      numKept,
      globalOffset,
      elimIndex,
      keptBlocks,
      elimBlocks,
      heeOffset: Int32Array.from(heeOffsetArr),
      heeTotal,
      couplings,
      hecOffsets,
      hecTotal,
      posKind,
      posColumn,
      posHec,
      elimPosition,
      maxResiduals,
      maxInner,
      maxTangent,
      maxCouplingWidth,
      numResiduals,
      numFree,
    };
  }
}
