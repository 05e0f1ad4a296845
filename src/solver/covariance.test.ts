import { describe, expect, test } from 'vitest';
import { Matrix, inverse } from 'ml-matrix';
import { expectMatrixClose } from '../testing/numeric.js';
import { solve } from './lm.js';
import { computeCovariance, evaluateResidualBlocks, problemCost } from './covariance.js';
import { coupledPairsProblem, type PairsProblem } from './test-problems.js';

/** All residuals concatenated. */
function residualVector(pp: PairsProblem): number[] {
  return evaluateResidualBlocks(pp.problem).flatMap((r) => Array.from(r!));
}

/**
 * Dense reference: J by central differences over every free coordinate
 * (A_1.., then B_0..), (JᵀJ)⁻¹ by ml-matrix's general inverse.
 */
function denseCovariance(pp: PairsProblem, skip: (blk: 'A' | 'B', idx: number, t: number) => boolean = () => false) {
  const coords: { arr: Float64Array; t: number; name: string }[] = [];
  pp.A.forEach((a, j) => {
    if (j === 0) return;
    for (let t = 0; t < 2; t++) if (!skip('A', j, t)) coords.push({ arr: a, t, name: `A${j}.${t}` });
  });
  pp.B.forEach((b, i) => {
    for (let t = 0; t < 2; t++) if (!skip('B', i, t)) coords.push({ arr: b, t, name: `B${i}.${t}` });
  });
  const m = residualVector(pp).length;
  const J = new Matrix(m, coords.length);
  const h = 1e-6;
  coords.forEach((c, k) => {
    const v = c.arr[c.t]!;
    c.arr[c.t] = v + h;
    const rp = residualVector(pp);
    c.arr[c.t] = v - h;
    const rm = residualVector(pp);
    c.arr[c.t] = v;
    for (let i = 0; i < m; i++) J.set(i, k, (rp[i]! - rm[i]!) / (2 * h));
  });
  return { cov: inverse(J.transpose().mmul(J)), coords };
}

describe('covariance', () => {
  test.each([true, false])('joint kept-block covariance equals the dense (JᵀJ)⁻¹ marginal (eliminate = %s)', (eliminate) => {
    const pp = coupledPairsProblem({ eliminate });
    solve(pp.problem, { functionTolerance: 1e-12 });
    const res = computeCovariance(pp.problem);
    expect(res.ok, res.ok ? '' : res.message).toBe(true);
    if (!res.ok) return;
    const { cov } = denseCovariance(pp);
    // Kept blocks A1..A3 are the first 6 dense coordinates.
    for (let j = 1; j <= 3; j++) {
      for (let k = 1; k <= 3; k++) {
        const ref = new Float64Array(4);
        for (let a = 0; a < 2; a++) for (let b = 0; b < 2; b++) ref[a * 2 + b] = cov.get(2 * (j - 1) + a, 2 * (k - 1) + b);
        expectMatrixClose(res.covariance.cross(pp.aIds[j]!, pp.aIds[k]!), ref, { rel: 1e-6 }, `cross(A${j}, A${k})`);
      }
    }
    // sigma0² = Σr² / (m − n)
    const r = residualVector(pp);
    const rss = r.reduce((s, v) => s + v * v, 0);
    expect(res.covariance.sigma0Squared).toBeCloseTo(rss / (240 - 46), 14);
    expect(res.covariance.numResiduals).toBe(240);
    expect(res.covariance.numFreeParameters).toBe(46);
    expect(2 * problemCost(pp.problem)).toBeCloseTo(rss, 12);
    if (eliminate) {
      expect(() => res.covariance.block(pp.bIds[0]!)).toThrow(/eliminated/);
      // Marginal of an eliminated block: dense coordinates of B4 start at 6 + 2·4.
      const ref = new Float64Array(4);
      for (let a = 0; a < 2; a++) for (let b = 0; b < 2; b++) ref[a * 2 + b] = cov.get(14 + a, 14 + b);
      expectMatrixClose(res.covariance.eliminatedBlock(pp.bIds[4]!), ref, { rel: 1e-6 }, 'eliminated B4');
    }
  });

  test('fixed tangent indices get zero rows and columns; the rest is the reduced-problem inverse', () => {
    const pp = coupledPairsProblem({ fixedA: { 2: [1] } });
    solve(pp.problem, { functionTolerance: 1e-12 });
    const res = computeCovariance(pp.problem);
    expect(res.ok).toBe(true);
    if (!res.ok) return;
    const c22 = res.covariance.block(pp.aIds[2]!);
    expect(c22[1]).toBe(0);
    expect(c22[2]).toBe(0);
    expect(c22[3]).toBe(0);
    const c12 = res.covariance.cross(pp.aIds[1]!, pp.aIds[2]!);
    expect(c12[1]).toBe(0);
    expect(c12[3]).toBe(0);
    const { cov } = denseCovariance(pp, (blk, idx, t) => blk === 'A' && idx === 2 && t === 1);
    // Dense order: A1.0 A1.1 A2.0 A3.0 A3.1 …
    expect(c22[0]).toBeCloseTo(cov.get(2, 2), 9);
    expect(c12[0]).toBeCloseTo(cov.get(0, 2), 9);
  });

  test('gauge-free problem: rank deficiency is reported with the blocks, not inverted', () => {
    const pp = coupledPairsProblem({ gaugeFree: true, eliminate: true });
    const s = solve(pp.problem);
    expect(s.termination).toBe('converged');
    const res = computeCovariance(pp.problem);
    expect(res.ok).toBe(false);
    if (res.ok) return;
    expect(res.reason).toBe('rank_deficient');
    expect(res.nullSpaceDimension).toBe(2);
    expect(res.reciprocalCondition).toBeLessThan(1e-14);
    expect(res.message).toMatch(/^2-dimensional null space/);
    expect(res.message).toMatch(/gauge block held constant/);
    expect(res.poorlyConstrained.map((p) => p.label)).toEqual(['A0', 'A1', 'A2', 'A3']);
    expect(res.poorlyConstrained[0]!.tangentIndices).toEqual([0, 1]);
  });

  test('a coordinate no residual touches is named', () => {
    const pp = coupledPairsProblem({ numA: 2, numB: 3 });
    const extra = pp.problem.addParameterBlock({ values: Float64Array.of(1, 2), label: 'orphan' });
    pp.problem.addResidualBlock({
      numResiduals: 1, parameterBlocks: [extra], innerSize: 2, mapped: false,
      evaluate(params, r, J) {
        r[0] = params[0]![0]! - 1;
        if (J) { J[0] = 1; J[1] = 0; }
        return true;
      },
    });
    const res = computeCovariance(pp.problem);
    expect(res.ok).toBe(false);
    if (res.ok) return;
    expect(res.reason).toBe('rank_deficient');
    expect(res.message).toContain('"orphan" [1]');
  });
});
