import { describe, expect, test } from 'vitest';
import { InputError } from '../errors.js';
import { Problem, euclideanManifold } from './problem-builder.js';
import type { ResidualBlock } from './problem.js';

const block = (ids: number[], innerSize: number, extra: Partial<ResidualBlock> = {}): ResidualBlock => ({
  numResiduals: 2,
  parameterBlocks: ids,
  innerSize,
  mapped: false,
  evaluate: () => true,
  ...extra,
});

describe('Problem validation', () => {
  test('ids are assigned in insertion order and the layout puts kept blocks first', () => {
    const p = new Problem();
    expect(p.addParameterBlock({ values: new Float64Array(2), eliminate: true, label: 'e' })).toBe(0);
    expect(p.addParameterBlock({ values: new Float64Array(3), label: 'k' })).toBe(1);
    expect(p.addParameterBlock({ values: new Float64Array(1), constant: true, label: 'c' })).toBe(2);
    expect(p.addResidualBlock(block([0, 1, 2], 6))).toBe(0);
    const L = p.layout();
    expect(Array.from(L.globalOffset)).toEqual([3, 0, -1]);
    expect(L.numKept).toBe(3);
    expect(L.numTangent).toBe(5);
    expect(Array.from(L.couplings[0]!)).toEqual([1]);
  });
  test('a residual block touching two eliminated blocks names both labels', () => {
    const p = new Problem();
    p.addParameterBlock({ values: new Float64Array(2), eliminate: true, label: 'frame 3' });
    p.addParameterBlock({ values: new Float64Array(2), eliminate: true, label: 'frame 4' });
    try {
      p.addResidualBlock(block([0, 1], 4));
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).code).toBe('solver.invalid_problem');
      expect((e as InputError).message).toMatch(/"frame 3", "frame 4".*at most one/);
    }
  });
  test('size problems are all reported', () => {
    const p = new Problem();
    p.addParameterBlock({ values: new Float64Array(2), label: 'a' });
    try {
      p.addResidualBlock(block([0, 7], 5, { lossGroupSize: 3 }));
      expect.unreachable();
    } catch (e) {
      const issues = (e as InputError).issues.map((i) => i.message);
      expect(issues).toContain('lossGroupSize = 3 must be an integer ≥ 1 dividing numResiduals = 2');
      expect(issues).toContain('parameter block id 7 does not exist (have 1)');
    }
    expect(() => p.addResidualBlock(block([0], 3))).toThrow(/innerSize = 3 must equal Σ tangentSize = 2/);
    expect(() => p.addParameterBlock({ values: new Float64Array(3), manifold: euclideanManifold(2) })).toThrow(/values.length = 3 but manifold.ambientSize = 2/);
    expect(() => p.addParameterBlock({ values: new Float64Array(2), fixedTangentIndices: [2] })).toThrow(/fixedTangentIndices contains 2/);
  });
  test('a constant block is never eliminated', () => {
    const p = new Problem();
    p.addParameterBlock({ values: new Float64Array(1), eliminate: true, constant: true });
    expect(p.parameterBlock(0).eliminate).toBe(false);
  });
});

describe('Problem.residualSizesChanged', () => {
  /** Straight line y = a + b·x through the points of `data` (mutable: points can be dropped). */
  const lineBlock = (data: { x: number[]; y: number[] }): ResidualBlock & { numResiduals: number } => ({
    numResiduals: data.x.length,
    parameterBlocks: [0],
    innerSize: 2,
    mapped: false,
    evaluate(params, r, J) {
      const [a, b] = params[0]!;
      for (let i = 0; i < data.x.length; i++) {
        r[i] = a! + b! * data.x[i]! - data.y[i]!;
        if (J) {
          J[2 * i] = 1;
          J[2 * i + 1] = data.x[i]!;
        }
      }
      return true;
    },
  });

  test('solving after dropping residuals in place equals solving a problem built without them', async () => {
    const { solve } = await import('./lm.js');
    const x = [0, 1, 2, 3, 4, 5];
    const y = [1.1, 2.9, 5.2, 30, 9.1, 10.8]; // the fourth point is an outlier
    const data = { x: [...x], y: [...y] };
    const p = new Problem();
    p.addParameterBlock({ values: new Float64Array(2), label: 'line' });
    const blk = lineBlock(data);
    p.addResidualBlock(blk);
    solve(p);
    const before = p.layout().numResiduals;
    data.x.splice(3, 1);
    data.y.splice(3, 1);
    blk.numResiduals = data.x.length;
    p.residualSizesChanged();
    expect(p.layout().numResiduals).toBe(before - 1);
    const start = Float64Array.from(p.parameterBlock(0).values);
    const summary = solve(p);
    // The same solve on a problem built from scratch, from the same start: identical arithmetic.
    const fresh = new Problem();
    fresh.addParameterBlock({ values: start, label: 'line' });
    fresh.addResidualBlock(lineBlock({ x: data.x, y: data.y }));
    const freshSummary = solve(fresh);
    expect(summary.numResiduals).toBe(5);
    expect(Array.from(p.parameterBlock(0).values)).toEqual(Array.from(fresh.parameterBlock(0).values));
    expect(summary.finalCost).toBe(freshSummary.finalCost);
    expect(summary.iterations.length).toBe(freshSummary.iterations.length);
  });

  test('a block left without residuals is refused', () => {
    const data = { x: [1, 2], y: [1, 2] };
    const p = new Problem();
    p.addParameterBlock({ values: new Float64Array(2) });
    const blk = lineBlock(data);
    p.addResidualBlock(blk);
    blk.numResiduals = 0;
    expect(() => p.residualSizesChanged()).toThrow(/numResiduals = 0 violates integer ≥ 1/);
  });
});
