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
