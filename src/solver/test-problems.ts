/**
 * Small synthetic problems with a known optimum, used by the solver's tests
 * and benchmark. Not part of the public surface.
 *
 * "Coupled pairs": kept blocks A_j ∈ ℝ² (j < numA), eliminable blocks
 * B_i ∈ ℝ² (i < numB), one residual block per (i, j) with the inner quantity
 *   q = (A_j0 + B_i0, A_j1 · B_i1)
 *   r = [q0 − y0, q1 − y1, sin(q0) q1 − y2]
 * J_inner = [[1, 0], [0, 1], [cos(q0) q1, sin(q0)]] (3 x 2),
 * M_A = [[1, 0], [0, B_i1]], M_B = [[1, 0], [0, A_j1]].
 * Gauge: (A_j0 + c, B_i0 − c) and (A_j1 s, B_i1 / s) leave every q unchanged,
 * so A_0 is held constant unless `gaugeFree`.
 */
import { Problem } from './problem-builder.js';
import type { ResidualBlock } from './problem.js';
import type { LossFunction } from './loss.js';
import { gaussian, rng } from '../util/random.js';

export interface PairsOptions {
  numA?: number;
  numB?: number;
  eliminate?: boolean;
  mapped?: boolean;
  gaugeFree?: boolean;
  noise?: number;
  seed?: number;
  /** Perturbation of the start from the truth. */
  startError?: number;
  loss?: LossFunction;
  fixedA?: Record<number, number[]>;
  fixedB?: Record<number, number[]>;
  /** Replicate each (i, j) residual this many times (with fresh noise) inside one block, for benchmarks. */
  rowsPerPair?: number;
  /** Deliberately wrong Jacobian entry (for the Jacobian-check test). */
  wrongJacobian?: boolean;
}

export interface PairsProblem {
  problem: Problem;
  A: Float64Array[];
  B: Float64Array[];
  aIds: number[];
  bIds: number[];
  truthA: Float64Array[];
  truthB: Float64Array[];
}

export function coupledPairsProblem(o: PairsOptions = {}): PairsProblem {
  const numA = o.numA ?? 4;
  const numB = o.numB ?? 20;
  const noise = o.noise ?? 0.01;
  const rows = o.rowsPerPair ?? 1;
  const u = rng(o.seed ?? 7);
  const truthA = Array.from({ length: numA }, (_, j) => Float64Array.of(0.3 * j, 1 + 0.2 * j));
  const truthB = Array.from({ length: numB }, (_, i) => Float64Array.of(0.5 * Math.sin(i), 0.8 + 0.05 * i));
  const se = o.startError ?? 0.05;
  const A = truthA.map((a, j) => (j === 0 && !o.gaugeFree ? Float64Array.from(a) : a.map((v) => v + se * gaussian(u))));
  const B = truthB.map((b) => b.map((v) => v + se * gaussian(u)));
  const problem = new Problem();
  const aIds = A.map((a, j) =>
    problem.addParameterBlock({ values: a, constant: j === 0 && !o.gaugeFree, label: `A${j}`, fixedTangentIndices: o.fixedA?.[j] }),
  );
  const bIds = B.map((b, i) =>
    problem.addParameterBlock({ values: b, eliminate: o.eliminate ?? true, label: `B${i}`, fixedTangentIndices: o.fixedB?.[i] }),
  );
  const mapped = o.mapped ?? true;
  for (let i = 0; i < numB; i++) {
    for (let j = 0; j < numA; j++) {
      const a = truthA[j]!;
      const b = truthB[i]!;
      const q0 = a[0]! + b[0]!;
      const q1 = a[1]! * b[1]!;
      const y = new Float64Array(3 * rows);
      for (let k = 0; k < rows; k++) {
        y[3 * k] = q0 + noise * gaussian(u);
        y[3 * k + 1] = q1 + noise * gaussian(u);
        y[3 * k + 2] = Math.sin(q0) * q1 + noise * gaussian(u);
      }
      problem.addResidualBlock(pairBlock(aIds[j]!, bIds[i]!, y, rows, mapped, o.loss, o.wrongJacobian === true && i === 0 && j === 1));
    }
  }
  return { problem, A, B, aIds, bIds, truthA, truthB };
}

function pairBlock(aId: number, bId: number, y: Float64Array, rows: number, mapped: boolean, loss: LossFunction | undefined, wrong: boolean): ResidualBlock {
  return {
    numResiduals: 3 * rows,
    parameterBlocks: [aId, bId],
    innerSize: mapped ? 2 : 4,
    mapped,
    loss,
    lossGroupSize: 3,
    evaluate(params, r, J, maps) {
      const a = params[0]!;
      const b = params[1]!;
      const q0 = a[0]! + b[0]!;
      const q1 = a[1]! * b[1]!;
      const s = Math.sin(q0);
      const c = Math.cos(q0);
      for (let k = 0; k < rows; k++) {
        r[3 * k] = q0 - y[3 * k]!;
        r[3 * k + 1] = q1 - y[3 * k + 1]!;
        r[3 * k + 2] = s * q1 - y[3 * k + 2]!;
      }
      if (!J) return true;
      const j20 = c * q1 * (wrong ? 1.5 : 1);
      for (let k = 0; k < rows; k++) {
        if (mapped) {
          const o = 3 * k * 2;
          J[o] = 1; J[o + 1] = 0;
          J[o + 2] = 0; J[o + 3] = 1;
          J[o + 4] = j20; J[o + 5] = s;
        } else {
          // Columns: [A0, A1, B0, B1] = J_inner · [M_A | M_B].
          const o = 3 * k * 4;
          J[o] = 1; J[o + 1] = 0; J[o + 2] = 1; J[o + 3] = 0;
          J[o + 4] = 0; J[o + 5] = b[1]!; J[o + 6] = 0; J[o + 7] = a[1]!;
          J[o + 8] = j20; J[o + 9] = s * b[1]!; J[o + 10] = j20; J[o + 11] = s * a[1]!;
        }
      }
      if (mapped && maps) {
        const MA = maps[0]!;
        MA[0] = 1; MA[1] = 0; MA[2] = 0; MA[3] = b[1]!;
        const MB = maps[1]!;
        MB[0] = 1; MB[1] = 0; MB[2] = 0; MB[3] = a[1]!;
      }
      return true;
    },
  };
}
