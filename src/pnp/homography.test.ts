import { describe, expect, test } from 'vitest';
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { applyHomography, estimateHomography } from './homography.js';
import { gaussian, rng } from '../testing/numeric.js';

/** A well-conditioned ground-truth homography (an arbitrary plane seen in perspective). */
const H_TRUE = Float64Array.of(0.9, -0.2, 0.3, 0.15, 1.1, -0.4, 0.05, -0.08, 1.0);

function mapped(src: number[], H: ArrayLike<number>): number[] {
  const out: number[] = [];
  for (let i = 0; i < src.length / 2; i++) out.push(...applyHomography(H, src[2 * i]!, src[2 * i + 1]!));
  return out;
}

function expectSameUpToScale(H: ArrayLike<number>, G: ArrayLike<number>, tol: number) {
  const s = G[8]! / H[8]!;
  for (let k = 0; k < 9; k++) expect(Math.abs(H[k]! * s - G[k]!)).toBeLessThan(tol);
}

describe('estimateHomography', () => {
  test('noise-free: 4 points recover H exactly (up to scale)', () => {
    const src = [0, 0, 1, 0, 1, 1, 0, 1];
    const r = estimateHomography(src, mapped(src, H_TRUE));
    expect(r.ok).toBe(true);
    if (r.ok) expectSameUpToScale(r.H, H_TRUE, 1e-12);
  });

  test('noise-free: 50 points in metres-scale coordinates far from the origin', () => {
    const u = rng(3);
    const src: number[] = [];
    for (let i = 0; i < 50; i++) src.push(100 + 0.5 * u(), -40 + 0.4 * u());
    // Conjugate H_TRUE by the shift so that the map stays well behaved on this patch.
    const sh = Float64Array.of(1, 0, -100, 0, 1, 40, 0, 0, 1);
    const G = new Matrix([Array.from(H_TRUE.slice(0, 3)), Array.from(H_TRUE.slice(3, 6)), Array.from(H_TRUE.slice(6))]).mmul(
      new Matrix([Array.from(sh.slice(0, 3)), Array.from(sh.slice(3, 6)), Array.from(sh.slice(6))]),
    );
    const g = Float64Array.from(G.to1DArray());
    const r = estimateHomography(src, mapped(src, g));
    expect(r.ok).toBe(true);
    if (r.ok) {
      const back = mapped(src, r.H);
      const want = mapped(src, g);
      for (let k = 0; k < back.length; k++) expect(Math.abs(back[k]! - want[k]!)).toBeLessThan(1e-9);
    }
  });

  test('noisy (1e-3): transfer error at the noise level, and close to an independent unnormalised DLT (plain ml-matrix SVD of A)', () => {
    const u = rng(9);
    const src: number[] = [];
    for (let i = 0; i < 20; i++) src.push(u(), u());
    const dst = mapped(src, H_TRUE).map((x) => x + 1e-3 * gaussian(u));
    const r = estimateHomography(src, dst);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    // Reprojection RMS must be at the noise level.
    const back = mapped(src, r.H);
    let s = 0;
    for (let k = 0; k < back.length; k++) s += (back[k]! - dst[k]!) ** 2;
    expect(Math.sqrt(s / 20)).toBeLessThan(3e-3);
    // Unnormalised DLT (plain SVD of A) gives a close but not identical answer on noisy data.
    const A = new Matrix(40, 9);
    for (let i = 0; i < 20; i++) {
      const [x, y] = [src[2 * i]!, src[2 * i + 1]!];
      const [xp, yp] = [dst[2 * i]!, dst[2 * i + 1]!];
      A.setRow(2 * i, [0, 0, 0, -x, -y, -1, yp * x, yp * y, yp]);
      A.setRow(2 * i + 1, [x, y, 1, 0, 0, 0, -xp * x, -xp * y, -xp]);
    }
    const svd = new SingularValueDecomposition(A);
    const h = svd.rightSingularVectors.getColumn(8);
    expectSameUpToScale(r.H, h, 1e-2);
  });

  test.each([
    ['3 points', [0, 0, 1, 0, 0, 1], 'too_few_points'],
    ['collinear', [0, 0, 1, 1, 2, 2, 3, 3, 4, 4], 'collinear'],
    ['NaN', [0, 0, 1, 0, 1, 1, NaN, 1], 'non_finite'],
    ['all coincident', [1, 1, 1, 1, 1, 1, 1, 1], 'collinear'],
  ] as const)('degenerate input: %s', (_name, src, reason) => {
    const dst = src.map((x) => (Number.isFinite(x) ? x * 2 + 1 : x));
    const r = estimateHomography(src, dst);
    expect(r.ok).toBe(false);
    if (!r.ok) {
      expect(r.reason).toBe(reason);
      expect(r.message.length).toBeGreaterThan(10);
    }
  });

  test('three of four points collinear: no unique homography', () => {
    const src = [0, 0, 1, 0, 2, 0, 0, 1];
    const r = estimateHomography(src, mapped(src, H_TRUE));
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toBe('degenerate');
  });

  test('size mismatch', () => {
    const r = estimateHomography([0, 0, 1, 0, 1, 1, 0, 1], [0, 0, 1, 0, 1, 1]);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toBe('size_mismatch');
  });
});
