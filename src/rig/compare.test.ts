/**
 * Significance arithmetic of compare.ts against outside references, and the
 * verdict rules on hand-made rig files.
 */
import { describe, expect, test } from 'vitest';
import { chiSquare6Survival, compareRigFiles, DEFAULT_TOLERANCES, mahalanobis2 } from './compare.js';
import { spdInverse } from '../linalg/small.js';
import { rng, gaussian } from '../testing/numeric.js';
import type { RigCamera, RigFile } from '../io/types.js';
import { InputError } from '../errors.js';

describe('χ² survival with 6 degrees of freedom', () => {
  test('matches numerical integration of the χ²₆ density', () => {
    // Density of χ² with k dof (handbook formula, Abramowitz & Stegun 26.4.1 (section from memory)):
    // f(x) = x^{k/2−1} e^{−x/2} / (2^{k/2} Γ(k/2)); for k = 6, Γ(3) = 2: f(x) = x² e^{−x/2} / 16.
    const f = (x: number) => (x * x * Math.exp(-x / 2)) / 16;
    // Composite Simpson's rule from x to 200 (the tail beyond is below 1e-38).
    const tail = (x: number) => {
      const n = 20000;
      const h = (200 - x) / n;
      let s = f(x) + f(200);
      for (let i = 1; i < n; i++) s += (i % 2 ? 4 : 2) * f(x + i * h);
      return (s * h) / 3;
    };
    for (const x of [0.5, 2, 6, 12.5916, 16.8119, 30]) {
      expect(Math.abs(chiSquare6Survival(x) - tail(x))).toBeLessThan(1e-10);
    }
  });

  test('tabulated upper quantiles of χ²₆ (statistical tables, values from memory): 12.592 → 0.05, 16.812 → 0.01', () => {
    expect(chiSquare6Survival(12.5916)).toBeCloseTo(0.05, 5);
    expect(chiSquare6Survival(16.8119)).toBeCloseTo(0.01, 5);
    expect(chiSquare6Survival(0)).toBe(1);
  });
});

describe('Mahalanobis distance', () => {
  test('equals Δᵀ S⁻¹ Δ from an explicit inverse on random SPD matrices', () => {
    const u = rng(5);
    for (let trial = 0; trial < 20; trial++) {
      const A = Float64Array.from({ length: 36 }, () => gaussian(u));
      const S = new Float64Array(36);
      for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) {
        let s = i === j ? 0.1 : 0;
        for (let k = 0; k < 6; k++) s += A[i * 6 + k]! * A[j * 6 + k]!;
        S[i * 6 + j] = s;
      }
      const d = Float64Array.from({ length: 6 }, () => gaussian(u));
      const inv = spdInverse(S, 6)!;
      let q = 0;
      for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) q += d[i]! * inv[i * 6 + j]! * d[j]!;
      expect(Math.abs(mahalanobis2(d, S)! - q) / q).toBeLessThan(1e-9);
    }
  });

  test('zero or rank-deficient covariance gives null (significance unavailable)', () => {
    expect(mahalanobis2([1, 0, 0, 0, 0, 0], new Float64Array(36))).toBeNull();
    const S = new Float64Array(36);
    for (let i = 0; i < 5; i++) S[i * 7] = 1e-6;
    expect(mahalanobis2([1, 0, 0, 0, 0, 0], S)).toBeNull();
  });
});

function camera(name: string, parent: string | null, t: [number, number, number], q: [number, number, number, number], sigma: number): RigCamera {
  const covariance = new Array(36).fill(0);
  for (let i = 0; i < 6; i++) covariance[i * 7] = parent === null ? 0 : sigma * sigma;
  return {
    name, parent, translation: t, quaternion_wxyz: q, rpy_deg: [0, 0, 0],
    sigma_translation_mm: [0, 0, 0], sigma_rotation_deg: [0, 0, 0], covariance,
    model: 'pinhole', resolution: [640, 480], focal: [500, 500], center: [319.5, 239.5], distortion: [],
    rms_px: 0.3, detections_used: 100, detections_rejected: 0,
  };
}

function rig(cams: RigCamera[], root = 'a'): RigFile {
  return { format: 'rig-calibration/1', name: 'hand-made', root, cameras: cams, quality: { rms_px: 0.3, sigma0: 1, frames_used: 10, iterations: 5, converged: true } };
}

describe('verdicts', () => {
  const I: [number, number, number, number] = [1, 0, 0, 0];
  // 0.3° about z: q = [cos(θ/2), 0, 0, sin(θ/2)].
  const th = (0.3 * Math.PI) / 180;
  const qz: [number, number, number, number] = [Math.cos(th / 2), 0, 0, Math.sin(th / 2)];
  const A = rig([camera('a', null, [0, 0, 0], I, 0), camera('b', 'a', [0.1, 0, 0], I, 1e-4), camera('c', 'a', [-0.1, 0, 0], I, 1e-4), camera('d', 'a', [0, 0.1, 0], I, 1e-4)]);

  test('moved (significant, beyond), unclear (beyond, within noise), within tolerance, not compared', () => {
    const B = rig([
      camera('a', null, [0, 0, 0], I, 0),
      camera('b', 'a', [0.1, 0.002, 0], I, 1e-4), // 2 mm, σ ≈ 0.14 mm combined: significant
      { ...camera('c', 'a', [-0.1, 0, 0], qz, 1e-4), covariance: (() => { const c = new Array(36).fill(0); for (let i = 0; i < 6; i++) c[i * 7] = 1e-4; return c; })() }, // 0.3° but σ_rot ≈ 0.6°
      camera('e', 'a', [0, 0, 0.1], I, 1e-4),
    ]);
    const cmp = compareRigFiles(A, B);
    const v = Object.fromEntries(cmp.cameras.map((c) => [c.name, c.verdict]));
    expect(v).toEqual({ a: 'reference', b: 'moved', c: 'unclear', d: 'not-compared', e: 'not-compared' });
    expect(cmp.withinTolerance).toBe(false);
    const b = cmp.cameras.find((c) => c.name === 'b')!;
    expect(b.shiftNormMm).toBeCloseTo(2, 9);
    expect(b.shiftMm![1]).toBeCloseTo(2, 9);
    const c = cmp.cameras.find((x) => x.name === 'c')!;
    expect(c.rotationAngleDeg).toBeCloseTo(0.3, 9);
    expect(c.rotationDeg![2]).toBeCloseTo(0.3, 9);
  });

  test('a small significant change within tolerance passes; truth files without covariance give n/a', () => {
    const B = rig([camera('a', null, [0, 0, 0], I, 0), camera('b', 'a', [0.1, 0.0005, 0], I, 1e-5), camera('c', 'a', [-0.1, 0, 0], I, 1e-5), camera('d', 'a', [0, 0.1, 0], I, 1e-5)]);
    const cmp = compareRigFiles(A, B);
    const b = cmp.cameras.find((c) => c.name === 'b')!;
    expect(b.significant).toBe(true);
    expect(b.verdict).toBe('within-tolerance');
    expect(cmp.withinTolerance).toBe(true);
    const zero = (r: RigFile) => rig(r.cameras.map((c) => ({ ...c, covariance: new Array(36).fill(0) })));
    const z = compareRigFiles(zero(A), zero(B));
    expect(z.cameras.every((c) => c.pValue === null && c.significant === null)).toBe(true);
    expect(z.withinTolerance).toBe(true);
    const tight = compareRigFiles(zero(A), zero(B), { ...DEFAULT_TOLERANCES, maxShiftMm: 0.4 });
    expect(tight.cameras.find((c) => c.name === 'b')!.verdict).toBe('moved');
  });

  test('different roots are an input error naming both', () => {
    const B = rig([camera('b', null, [0, 0, 0], I, 0), camera('a', 'b', [-0.1, 0, 0], I, 1e-4)], 'b');
    expect(() => compareRigFiles(A, B, DEFAULT_TOLERANCES, { a: 'A.yaml', b: 'B.yaml' })).toThrow(InputError);
    expect(() => compareRigFiles(A, B)).toThrow(/"b".*"a"/);
  });
});
