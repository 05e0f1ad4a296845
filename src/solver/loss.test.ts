import { describe, expect, test } from 'vitest';
import { cauchyLoss, huberLoss, trivialLoss } from './loss.js';
import type { LossFunction } from './loss.js';

const rho = (l: LossFunction, s: number) => {
  const out = new Float64Array(3);
  l.evaluate(s, out);
  return out;
};

describe('loss functions', () => {
  const losses: [string, LossFunction][] = [
    ['trivial', trivialLoss],
    ['huber(0.7)', huberLoss(0.7)],
    ['cauchy(0.7)', cauchyLoss(0.7)],
    ['huber(3)', huberLoss(3)],
    ['cauchy(3)', cauchyLoss(3)],
  ];
  // Points away from Huber's kink at s = a² (where ρ″ jumps).
  const points = [1e-4, 0.1, 0.3, 0.6, 2, 5, 30, 400];
  test.each(losses)("%s: ρ′ and ρ″ match central differences of ρ and ρ′", (_n, l) => {
    for (const s of points) {
      const h = 1e-6 * Math.max(s, 1e-2);
      const p = rho(l, s + h);
      const m = rho(l, s - h);
      const r = rho(l, s);
      expect(Math.abs(r[1]! - (p[0]! - m[0]!) / (2 * h))).toBeLessThan(1e-7 * Math.max(1, Math.abs(r[1]!)));
      expect(Math.abs(r[2]! - (p[1]! - m[1]!) / (2 * h))).toBeLessThan(1e-6 * Math.max(1, Math.abs(r[2]!)));
    }
  });
  test.each(losses)('%s: ρ(0) = 0, ρ′(0) = 1 (quadratic near zero)', (_n, l) => {
    const r = rho(l, 0);
    expect(r[0]).toBe(0);
    expect(r[1]).toBe(1);
  });
  test('Huber: formula values and continuity at s = a²', () => {
    // Huber (1964): ρ(s) = s for s ≤ a², 2a√s − a² beyond.
    const l = huberLoss(2);
    expect(rho(l, 3)[0]).toBe(3);
    expect(rho(l, 9)[0]).toBeCloseTo(2 * 2 * 3 - 4, 14);
    const below = rho(l, 4 - 1e-12);
    const above = rho(l, 4 + 1e-12);
    expect(above[0]! - below[0]!).toBeLessThan(1e-10);
    expect(Math.abs(above[1]! - below[1]!)).toBeLessThan(1e-10);
  });
  test('Cauchy: formula values', () => {
    // Cauchy/Lorentzian: ρ(s) = a² log(1 + s/a²).
    const l = cauchyLoss(0.5);
    expect(rho(l, 1)[0]).toBeCloseTo(0.25 * Math.log(5), 14);
    expect(rho(l, 1)[1]).toBeCloseTo(1 / 5, 14);
  });
  test('invalid scale is rejected', () => {
    expect(() => huberLoss(0)).toThrow(/a = 0 violates 0 < a < ∞/);
    expect(() => cauchyLoss(Number.NaN)).toThrow(RangeError);
  });
});
