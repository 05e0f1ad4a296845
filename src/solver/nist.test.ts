/**
 * NIST StRD nonlinear regression: certified parameters and standard
 * deviations. Reference: NIST ITL Statistical Reference Datasets, nonlinear
 * regression (https://www.itl.nist.gov/div898/strd/nls/nls_main.shtml), read
 * from the JSON copies in reference-data/nist-strd (see its README).
 *
 * Jacobians in this test come from a fourth-order central difference of the
 * model expression inside the test's residual block (the model is a JS
 * expression, there is no analytic form); the engine's own Jacobian check is
 * tested elsewhere.
 */
import { readFileSync, readdirSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, test } from 'vitest';
import { referenceDataDir } from '../testing/paths.js';
import { Problem } from './problem-builder.js';
import { solve, lmPresets, type LmOptions } from './lm.js';
import { computeCovariance } from './covariance.js';
import type { ResidualBlock } from './problem.js';

interface NistDataset {
  name: string;
  difficulty: string;
  model: string;
  x: number[];
  y: number[];
  start1: number[];
  start2: number[];
  certified: { params: number[]; std_dev: number[]; rss: number; residual_sd: number };
}

const dir = path.join(referenceDataDir(), 'nist-strd');
const datasets: NistDataset[] = readdirSync(dir)
  .filter((f) => f.endsWith('.json'))
  .sort()
  .map((f) => JSON.parse(readFileSync(path.join(dir, f), 'utf8')) as NistDataset);

/** r_i = model(x_i; b) − y_i, Jacobian by a 4th-order central difference. */
function curveBlock(ds: NistDataset, p: number): ResidualBlock {
  const argNames = ['x', ...Array.from({ length: p }, (_, i) => `b${i + 1}`)];
  const f = new Function(...argNames, `return ${ds.model};`) as (...a: number[]) => number;
  const n = ds.x.length;
  const args = new Array<number>(p + 1);
  const model = (b: Float64Array, x: number): number => {
    args[0] = x;
    for (let k = 0; k < p; k++) args[k + 1] = b[k]!;
    return f(...args);
  };
  const bb = new Float64Array(p);
  return {
    numResiduals: n,
    parameterBlocks: [0],
    innerSize: p,
    mapped: false,
    evaluate(params, residuals, jacobian) {
      const b = params[0]!;
      for (let i = 0; i < n; i++) {
        const v = model(b, ds.x[i]!) - ds.y[i]!;
        if (!Number.isFinite(v)) return false;
        residuals[i] = v;
      }
      if (jacobian) {
        for (let k = 0; k < p; k++) {
          const h = 1e-3 * Math.max(Math.abs(b[k]!), 1e-6);
          bb.set(b);
          for (let i = 0; i < n; i++) {
            const x = ds.x[i]!;
            bb[k] = b[k]! + 2 * h;
            const f2 = model(bb, x);
            bb[k] = b[k]! + h;
            const f1 = model(bb, x);
            bb[k] = b[k]! - h;
            const fm1 = model(bb, x);
            bb[k] = b[k]! - 2 * h;
            const fm2 = model(bb, x);
            jacobian[i * p + k] = (-f2 + 8 * f1 - 8 * fm1 + fm2) / (12 * h);
          }
        }
      }
      return true;
    },
  };
}

function significantDigits(actual: number, expected: number): number {
  if (actual === expected) return 16;
  return -Math.log10(Math.abs(actual - expected) / Math.abs(expected));
}

function fit(ds: NistDataset, start: number[], options: Partial<LmOptions>, certifiedSigma = false) {
  const p = ds.certified.params.length;
  const problem = new Problem();
  const values = Float64Array.from(start);
  problem.addParameterBlock({ values, label: `${ds.name} b` });
  problem.addResidualBlock(curveBlock(ds, p));
  const summary = solve(problem, options);
  const cov = computeCovariance(problem);
  let paramDigits = Infinity;
  for (let k = 0; k < p; k++) paramDigits = Math.min(paramDigits, significantDigits(values[k]!, ds.certified.params[k]!));
  let sdDigits = NaN;
  if (cov.ok) {
    const c = cov.covariance.block(0);
    sdDigits = Infinity;
    for (let k = 0; k < p; k++) {
      const s2 = certifiedSigma ? ds.certified.residual_sd ** 2 : cov.covariance.sigma0Squared;
      const sd = Math.sqrt(c[k * p + k]! * s2);
      sdDigits = Math.min(sdDigits, significantDigits(sd, ds.certified.std_dev[k]!));
    }
  }
  return { summary, paramDigits, sdDigits, values, cov };
}

// Every dataset from both starts must reach 6 significant digits in the
// parameters and 4 in the standard deviations. Preset per case, listed
// explicitly: `precise` (tight tolerances; the defaults stop at
// |Δcost| < 1e-6·cost, meant for bundle adjustment, not 6-digit reference
// fits) everywhere except two hard starts that need `robust` (large initial
// λ, Moré diagonal memory, low λ floor): with `precise`, BoxBOD start1
// converges to the saturated local solution b1 ≈ 172.5 (cost 4886) and
// MGH10 start1 does not converge within 2000 iterations.
const ROBUST_CASES = new Set(['BoxBOD/start1', 'MGH10/start1']);
// Lanczos1: the certified RSS is 1.43e-25, so residuals are ~1e-13 and their
// double-precision rounding (~1e-16 each) limits s² = RSS/(n−p) to about
// 3 digits (README note). For this dataset the standard deviations use the
// certified residual SD for s, which still checks (JᵀJ)⁻¹ to 4 digits.
const CERTIFIED_SIGMA = new Set(['Lanczos1']);

const cases = datasets.flatMap((ds) =>
  (['start1', 'start2'] as const).map((start) => ({
    name: ds.name,
    start,
    ds,
    preset: ROBUST_CASES.has(`${ds.name}/${start}`) ? ('robust' as const) : ('precise' as const),
  })),
);

describe('NIST StRD nonlinear regression (certified values)', () => {
  test('all 26 datasets are present', () => {
    expect(datasets.length).toBe(26);
  });
  test.each(cases)('NIST StRD $name from $start with preset $preset', ({ ds, start, preset }) => {
    const r = fit(ds, ds[start], lmPresets[preset], CERTIFIED_SIGMA.has(ds.name));
    expect(r.summary.termination, r.summary.message).toBe('converged');
    expect(r.paramDigits, `parameters ${Array.from(r.values).join(', ')}`).toBeGreaterThanOrEqual(6);
    expect(r.cov.ok, r.cov.ok ? '' : r.cov.message).toBe(true);
    expect(r.sdDigits).toBeGreaterThanOrEqual(4);
  });
});
