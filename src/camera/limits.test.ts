import { describe, expect, test } from 'vitest';
import { firstPositiveRoot, LimitCache } from './limits.js';

describe('firstPositiveRoot', () => {
  test('linear and quadratic cases against their closed forms', () => {
    expect(firstPositiveRoot([1, -2])).toBeCloseTo(0.5, 15);
    // (1 − s)(1 − s/3) = 1 − (4/3)s + s²/3: first root 1.
    expect(firstPositiveRoot([1, -4 / 3, 1 / 3])).toBeCloseTo(1, 14);
    // Double root (1 − s)²: touches zero at s = 1.
    expect(firstPositiveRoot([1, -2, 1])).toBeCloseTo(1, 7);
    expect(firstPositiveRoot([1, 0, 1])).toBe(Infinity);
    expect(firstPositiveRoot([1, 2, 3, 4])).toBe(Infinity);
  });

  test('a cubic that dips below zero and recovers: the first root, not a later one', () => {
    // (s − 1)(s − 2)(s − 3)·(−1/6) = 1 − (11/6)s + s² − s³/6 → roots 1, 2, 3.
    expect(firstPositiveRoot([1, -11 / 6, 1, -1 / 6])).toBeCloseTo(1, 12);
    // (s − 1)(s − 2)(s − 3)(s − 4)/24 → first root 1 even though p > 0 again beyond 4.
    expect(firstPositiveRoot([1, -50 / 24, 35 / 24, -10 / 24, 1 / 24])).toBeCloseTo(1, 12);
  });

  test('roots beyond sMax are ignored; non-finite coefficients give NaN', () => {
    expect(firstPositiveRoot([1, -0.1], 5)).toBe(Infinity);
    expect(firstPositiveRoot([1, -0.1], 20)).toBeCloseTo(10, 13);
    expect(firstPositiveRoot([1, NaN])).toBeNaN();
  });
});

describe('LimitCache', () => {
  test('computes once per coefficient vector and recomputes when they change', () => {
    let calls = 0;
    const cache = new LimitCache((a, b, c, d, out) => {
      calls++;
      out[0] = a + b + c + d;
      out[1] = a * 10;
    }, 2);
    expect(cache.lookup(1, 2, 3, 4)).toBe(10);
    expect(cache.value1).toBe(10);
    expect(cache.lookup(1, 2, 3, 4)).toBe(10);
    expect(calls).toBe(1);
    expect(cache.lookup(2, 2, 3, 4)).toBe(11);
    expect(cache.lookup(1, 2, 3, 4)).toBe(10);
    expect(calls).toBe(2);
    expect(cache.lookup(3, 0, 0, 0)).toBe(3); // evicts the oldest slot
    expect(cache.lookup(1, 2, 3, 4)).toBe(10);
    expect(calls).toBe(4);
    expect(cache.lookup(NaN, 0, 0, 0)).toBeNaN();
    expect(cache.lookup(NaN, 0, 0, 0)).toBeNaN();
    expect(calls).toBe(6);
  });
});
