import { describe, expect, test } from 'vitest';
import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import { OptionsError } from '../errors.js';
import { expectMatrixClose, gaussian, rng } from '../testing/numeric.js';
import { Problem } from './problem-builder.js';
import { DEFAULT_LM_OPTIONS, lmPresets, solve, validateLmOptions, type IterationRecord, type LmOptions } from './lm.js';
import { cauchyLoss, huberLoss } from './loss.js';
import { coupledPairsProblem } from './test-problems.js';
import { problemCost } from './covariance.js';
import { briefReport, fullReport } from './summary.js';
import type { LossFunction } from './loss.js';

const concat = (arrs: Float64Array[]) => Float64Array.from(arrs.flatMap((a) => Array.from(a)));

describe('Schur elimination', () => {
  test('one step with and without elimination is identical', () => {
    const a = coupledPairsProblem({ eliminate: true });
    const b = coupledPairsProblem({ eliminate: false });
    expect(a.problem.layout().numKept).toBe(6);
    expect(b.problem.layout().numKept).toBe(46);
    solve(a.problem, { maxIterations: 1 });
    solve(b.problem, { maxIterations: 1 });
    expectMatrixClose(concat(a.A), concat(b.A), { abs: 1e-12 }, 'A after one step');
    expectMatrixClose(concat(a.B), concat(b.B), { abs: 1e-12 }, 'B after one step');
  });

  test('converged results are identical and near the truth', () => {
    const a = coupledPairsProblem({ eliminate: true });
    const b = coupledPairsProblem({ eliminate: false });
    const sa = solve(a.problem);
    const sb = solve(b.problem);
    expect(sa.termination).toBe('converged');
    expect(sb.termination).toBe('converged');
    expectMatrixClose(concat(a.A), concat(b.A), { abs: 1e-9 }, 'A');
    expectMatrixClose(concat(a.B), concat(b.B), { abs: 1e-9 }, 'B');
    expect(sa.finalCost).toBeCloseTo(sb.finalCost, 12);
    // Noise 0.01 per residual: estimates within a few sigma of the truth.
    expectMatrixClose(concat(a.A), concat(a.truthA), { abs: 0.03 }, 'A vs truth');
  });

  test('6-dim eliminated blocks coupled to 6-dim kept blocks (the pose-sized path): same steps as without elimination', () => {
    // r_k = a_k + b_k + 0.1·a_k·b_k − y_k (k = 0…5) between kept A_j and eliminated B_i, A_0 constant.
    const build = (eliminate: boolean) => {
      const u = rng(3);
      const A = Array.from({ length: 4 }, (_, j) => Float64Array.from({ length: 6 }, (_, k) => 0.1 * j + 0.05 * k));
      const B = Array.from({ length: 12 }, (_, i) => Float64Array.from({ length: 6 }, (_, k) => 0.3 * Math.sin(i + k)));
      const p = new Problem();
      const aIds = A.map((v, j) => p.addParameterBlock({ values: v, constant: j === 0, label: `A${j}` }));
      const bIds = B.map((v, i) => p.addParameterBlock({ values: v, eliminate, label: `B${i}` }));
      for (let i = 0; i < B.length; i++) {
        for (let j = 0; j < A.length; j++) {
          if ((i + j) % 3 === 2) continue; // not every pair observed
          const y = Float64Array.from({ length: 6 }, () => 0.5 + 0.2 * gaussian(u));
          p.addResidualBlock({
            numResiduals: 6,
            parameterBlocks: [aIds[j]!, bIds[i]!],
            innerSize: 12,
            mapped: false,
            evaluate(params, r, J) {
              const a = params[0]!;
              const b = params[1]!;
              for (let k = 0; k < 6; k++) {
                r[k] = a[k]! + b[k]! + 0.1 * a[k]! * b[k]! - y[k]!;
                if (J) {
                  for (let c = 0; c < 12; c++) J[k * 12 + c] = 0;
                  J[k * 12 + k] = 1 + 0.1 * b[k]!;
                  J[k * 12 + 6 + k] = 1 + 0.1 * a[k]!;
                }
              }
              return true;
            },
          });
        }
      }
      return { p, A, B };
    };
    const a = build(true);
    const b = build(false);
    expect(a.p.layout().numKept).toBe(18);
    solve(a.p, { maxIterations: 1 });
    solve(b.p, { maxIterations: 1 });
    expectMatrixClose(concat(a.A), concat(b.A), { abs: 1e-12 }, 'A after one step');
    expectMatrixClose(concat(a.B), concat(b.B), { abs: 1e-12 }, 'B after one step');
    solve(a.p);
    solve(b.p);
    expectMatrixClose(concat(a.A), concat(b.A), { abs: 1e-9 }, 'A');
    expectMatrixClose(concat(a.B), concat(b.B), { abs: 1e-9 }, 'B');
  });

  test('mapped (J_inner · M_k) and unmapped Jacobians give the same solve', () => {
    const a = coupledPairsProblem({ mapped: true });
    const b = coupledPairsProblem({ mapped: false });
    solve(a.problem);
    solve(b.problem);
    expectMatrixClose(concat(a.A), concat(b.A), { abs: 1e-9 }, 'A');
    expectMatrixClose(concat(a.B), concat(b.B), { abs: 1e-9 }, 'B');
  });
});

describe('summary', () => {
  test('fields, counts and criterion on a converging problem', () => {
    const { problem } = coupledPairsProblem();
    const seen: IterationRecord[] = [];
    const s = solve(problem, { onIteration: (r) => seen.push(r) });
    expect(s.termination).toBe('converged');
    expect(s.message).toMatch(/^(function tolerance|parameter tolerance|gradient tolerance)/);
    expect(s.numResiduals).toBe(20 * 4 * 3);
    expect(s.numFreeParameters).toBe(3 * 2 + 20 * 2);
    expect(s.numEliminatedBlocks).toBe(20);
    expect(s.reducedSystemSize).toBe(6);
    expect(seen.length).toBe(s.iterations.length);
    expect(s.acceptedSteps + s.rejectedSteps).toBe(s.iterations.length);
    expect(s.finalCost).toBeLessThan(s.initialCost);
    expect(s.finalCost).toBeCloseTo(problemCost(problem), 14);
    let prev = s.initialCost;
    for (const r of s.iterations) {
      expect(r.cost).toBeLessThanOrEqual(prev);
      if (r.accepted) expect(r.costChange).toBeGreaterThan(0);
      prev = r.cost;
    }
    expect(briefReport(s)).toContain('converged');
    expect(fullReport(s)).toContain(s.message);
  });

  test('with function and gradient tolerances off, the parameter tolerance fires', () => {
    const { problem } = coupledPairsProblem();
    const s = solve(problem, { functionTolerance: 0, gradientTolerance: 0, parameterTolerance: 1e-8 });
    expect(s.termination).toBe('converged');
    expect(s.message).toMatch(/^parameter tolerance: ‖δ‖ = .* < 1e-8 ·/);
    expect(s.acceptedSteps + s.rejectedSteps).toBe(s.iterations.length);
  });

  test('starting at the optimum stops on the gradient tolerance without iterating', () => {
    const p = new Problem();
    p.addParameterBlock({ values: Float64Array.of(1, -2) });
    p.addResidualBlock({
      numResiduals: 2, parameterBlocks: [0], innerSize: 2, mapped: false,
      evaluate(params, r, J) {
        r[0] = params[0]![0]! - 1;
        r[1] = 3 * (params[0]![1]! + 2);
        if (J) { J[0] = 1; J[1] = 0; J[2] = 0; J[3] = 3; }
        return true;
      },
    });
    const s = solve(p);
    expect(s.termination).toBe('converged');
    expect(s.message).toMatch(/^gradient tolerance: max\|g\| = 0\.000e\+0 < 1e-10 at the initial values/);
    expect(s.iterations).toEqual([]);
    expect(s.finalCost).toBe(0);
  });

  test('maxIterations reached gives no_convergence naming the criterion', () => {
    const { problem } = coupledPairsProblem({ startError: 0.3 });
    const s = solve(problem, { maxIterations: 1 });
    expect(s.termination).toBe('no_convergence');
    expect(s.message).toMatch(/maxIterations = 1 reached/);
    expect(s.iterations.length).toBe(1);
  });

  test('a residual block that cannot be evaluated at the start is a failure', () => {
    const p = new Problem();
    p.addParameterBlock({ values: Float64Array.of(1) });
    p.addResidualBlock({ numResiduals: 1, parameterBlocks: [0], innerSize: 1, mapped: false, evaluate: () => false });
    const s = solve(p);
    expect(s.termination).toBe('failure');
    expect(s.message).toMatch(/residual block #0 could not be evaluated/);
  });

  test('steps into an invalid region are rejected, not accepted', () => {
    // r = sqrt(x) − 0.5 defined only for x ≥ 0; minimum at x = 0.25.
    const p = new Problem();
    const x = Float64Array.of(4);
    p.addParameterBlock({ values: x });
    p.addResidualBlock({
      numResiduals: 1, parameterBlocks: [0], innerSize: 1, mapped: false,
      evaluate(params, r, J) {
        const v = params[0]![0]!;
        if (v < 0) return false;
        r[0] = Math.sqrt(v) - 0.5;
        if (J) J[0] = 0.5 / Math.sqrt(v);
        return true;
      },
    });
    const s = solve(p, { initialLambda: 1e-12, minLambda: 0 });
    expect(s.termination).toBe('converged');
    expect(x[0]).toBeCloseTo(0.25, 6);
    expect(s.rejectedSteps).toBeGreaterThan(0);
  });
});

describe('options', () => {
  test('defaults are frozen and valid', () => {
    expect(Object.isFrozen(DEFAULT_LM_OPTIONS)).toBe(true);
    expect(validateLmOptions({ ...DEFAULT_LM_OPTIONS })).toEqual([]);
    for (const preset of Object.values(lmPresets)) expect(validateLmOptions({ ...DEFAULT_LM_OPTIONS, ...preset })).toEqual([]);
  });
  test('validateLmOptions returns every issue', () => {
    const bad: LmOptions = { ...DEFAULT_LM_OPTIONS, maxIterations: 0, functionTolerance: -1, lambdaUpFactor: 0.5 };
    const issues = validateLmOptions(bad);
    expect(issues.map((i) => i.field)).toEqual(['maxIterations', 'functionTolerance', 'lambdaUpFactor']);
    expect(issues[0]!.message).toBe('maxIterations = 0 violates maxIterations ≥ 1 (integer)');
    const { problem } = coupledPairsProblem();
    expect(() => solve(problem, { maxIterations: 0 })).toThrow(OptionsError);
  });
});

describe('fixed tangent indices', () => {
  test('fixed coordinates of kept and eliminated blocks do not move', () => {
    const pp = coupledPairsProblem({ fixedA: { 2: [1] }, fixedB: { 3: [0] } });
    const a21 = pp.A[2]![1]!;
    const b30 = pp.B[3]![0]!;
    const a20 = pp.A[2]![0]!;
    const s = solve(pp.problem);
    expect(s.termination).toBe('converged');
    expect(s.numFreeParameters).toBe(46 - 2);
    expect(pp.A[2]![1]).toBe(a21);
    expect(pp.B[3]![0]).toBe(b30);
    expect(pp.A[2]![0]).not.toBe(a20);
  });
});

describe('Jacobian check (central differences)', () => {
  test('passes for correct Jacobians, mapped and unmapped', () => {
    for (const mapped of [true, false]) {
      const { problem } = coupledPairsProblem({ mapped });
      const s = solve(problem, { checkJacobians: true });
      expect(s.jacobianCheck?.ok).toBe(true);
      expect(s.jacobianCheck!.maxRelativeError).toBeLessThan(1e-7);
      expect(s.termination).toBe('converged');
    }
  });
  test('reports a wrong Jacobian entry with the block label', () => {
    const { problem, A } = coupledPairsProblem({ wrongJacobian: true });
    const before = concat(A);
    const s = solve(problem, { checkJacobians: true });
    expect(s.termination).toBe('failure');
    expect(s.jacobianCheck?.ok).toBe(false);
    expect(s.message).toMatch(/Jacobian check failed: residual block #1, "(A1|B0)" row 2/);
    expectMatrixClose(concat(A), before, { abs: 0 }, 'values untouched');
  });
});

/** Line y = 2x + 1 with 20% gross outliers (+5); one residual block per point. */
function lineProblem(loss: LossFunction | undefined) {
  const u = rng(11);
  const xs: number[] = [];
  const ys: number[] = [];
  for (let i = 0; i < 50; i++) {
    const x = i / 10;
    xs.push(x);
    ys.push(2 * x + 1 + 0.05 * gaussian(u) + (i % 5 === 2 ? 5 : 0));
  }
  const p = new Problem();
  const ab = Float64Array.of(0, 0);
  p.addParameterBlock({ values: ab, label: 'line' });
  xs.forEach((x, i) =>
    p.addResidualBlock({
      numResiduals: 1, parameterBlocks: [0], innerSize: 2, mapped: false, loss,
      evaluate(params, r, J) {
        const v = params[0]!;
        r[0] = v[0]! * x + v[1]! - ys[i]!;
        if (J) { J[0] = x; J[1] = 1; }
        return true;
      },
    }),
  );
  return { p, ab };
}

describe('robust losses', () => {
  test.each([
    ['huber', huberLoss(0.1)],
    ['cauchy', cauchyLoss(0.1)],
  ] as const)('%s down-weights injected outliers and reaches a stationary point of ½Σρ', (_name, loss) => {
    const plain = lineProblem(undefined);
    solve(plain.p, lmPresets.precise);
    const robust = lineProblem(loss);
    const s = solve(robust.p, lmPresets.precise);
    expect(s.termination).toBe('converged');
    // Plain least squares is pulled up by the outliers (mean shift 1); the robust fit is not.
    expect(Math.abs(plain.ab[1]! - 1)).toBeGreaterThan(0.5);
    expect(Math.abs(robust.ab[0]! - 2)).toBeLessThan(0.05);
    expect(Math.abs(robust.ab[1]! - 1)).toBeLessThan(0.1);
    // Stationarity of the robust cost itself, by central differences of problemCost.
    const h = 1e-6;
    for (let k = 0; k < 2; k++) {
      const v = robust.ab[k]!;
      robust.ab[k] = v + h;
      const cp = problemCost(robust.p);
      robust.ab[k] = v - h;
      const cm = problemCost(robust.p);
      robust.ab[k] = v;
      expect(Math.abs((cp - cm) / (2 * h))).toBeLessThan(1e-6);
    }
  });
});

describe('independent optimiser cross-check', () => {
  test('ml-levenberg-marquardt reaches the same optimum on y = a·exp(−b x) + c', () => {
    const u = rng(3);
    const x: number[] = [];
    const y: number[] = [];
    for (let i = 0; i < 40; i++) {
      x.push(i * 0.1);
      y.push(2.5 * Math.exp(-1.3 * i * 0.1) + 0.4 + 0.02 * gaussian(u));
    }
    const start = [1, 1, 0];
    const p = new Problem();
    const v = Float64Array.from(start);
    p.addParameterBlock({ values: v });
    p.addResidualBlock({
      numResiduals: x.length, parameterBlocks: [0], innerSize: 3, mapped: false,
      evaluate(params, r, J) {
        const [a, b, c] = params[0]!;
        for (let i = 0; i < x.length; i++) {
          const e = Math.exp(-b! * x[i]!);
          r[i] = a! * e + c! - y[i]!;
          if (J) { J[3 * i] = e; J[3 * i + 1] = -a! * x[i]! * e; J[3 * i + 2] = 1; }
        }
        return true;
      },
    });
    const s = solve(p, lmPresets.precise);
    expect(s.termination).toBe('converged');
    // Reference: ml-levenberg-marquardt (mljs), analytic Jacobian, tight tolerance.
    const ref = levenbergMarquardt(
      { x, y },
      ([a, b, c]: number[]) => (t: number) => a! * Math.exp(-b! * t) + c!,
      {
        initialValues: start,
        maxIterations: 2000,
        errorTolerance: 1e-14,
        jacobianFunction: ([a, b]: number[]) => (t: number) => [Math.exp(-b! * t), -a! * t * Math.exp(-b! * t), 1],
      },
    );
    const refCost = 0.5 * ref.parameterError;
    expect(Math.abs(s.finalCost - refCost) / refCost).toBeLessThan(1e-6);
    for (let k = 0; k < 3; k++) expect(v[k]).toBeCloseTo(ref.parameterValues[k]!, 3);
  });
});
