/**
 * Validity limits shared by the camera models.
 *
 * A lens model is only invertible where its radial mapping is strictly
 * increasing. Both distortion models write that derivative as a polynomial
 * in a squared radius with constant term 1:
 *
 *   brown-conrady:  d(r·radial(r))/dr = 1 + 3k1 s + 5k2 s² + 7k3 s³,          s = r²  (normalised radius)
 *   kannala-brandt: dθ_d/dθ           = 1 + 3k1 s + 5k2 s² + 7k3 s³ + 9k4 s⁴,  s = θ²
 *
 * The valid region is [0, s*) where s* is the first positive root of that
 * polynomial (+∞ when there is none). `firstPositiveRoot` finds it by
 * isolating the monotone pieces of the polynomial between the roots of its
 * derivative (recursively), then bisecting the first piece that reaches
 * zero, so double roots and narrow dips are not stepped over.
 *
 * `LimitCache` remembers the limit for a few recent coefficient vectors so
 * that `project()` pays a handful of comparisons per call instead of a root
 * search (a solve calls it ~10⁶ times with a few distinct cameras).
 */

/**
 * Smallest depth z (metres, camera optical frame) accepted by the
 * perspective models (pinhole, brown-conrady): points need z > MIN_DEPTH_M.
 * 1 µm is far below any real working distance and far above the depths at
 * which x/z loses meaning in double precision.
 */
export const MIN_DEPTH_M = 1e-6;

/** Evaluates Σ c[i] s^i (Horner). */
export function polyEval(c: ArrayLike<number>, s: number): number {
  let v = 0;
  for (let i = c.length - 1; i >= 0; i--) v = v * s + c[i]!;
  return v;
}

function trimmed(c: ArrayLike<number>): number[] {
  let n = c.length;
  while (n > 0 && c[n - 1] === 0) n--;
  return Array.from({ length: n }, (_, i) => c[i]!);
}

function derivative(c: readonly number[]): number[] {
  const d: number[] = [];
  for (let i = 1; i < c.length; i++) d.push(i * c[i]!);
  return d;
}

/** Bisection on [a, b] with p(a) > 0 ≥ p(b); returns the last point with p > 0. */
function bisectDown(c: readonly number[], a: number, b: number): number {
  for (let it = 0; it < 2000; it++) {
    const m = 0.5 * (a + b);
    if (m <= a || m >= b) break;
    if (polyEval(c, m) > 0) a = m;
    else b = m;
  }
  return a;
}

/** Bisection on [a, b] for a sign change of p (either direction). */
function bisectSignChange(c: readonly number[], a: number, b: number): number {
  const pa = polyEval(c, a);
  for (let it = 0; it < 2000; it++) {
    const m = 0.5 * (a + b);
    if (m <= a || m >= b) break;
    const pm = polyEval(c, m);
    if (pm === 0) return m;
    if (pm > 0 === pa > 0) a = m;
    else b = m;
  }
  return 0.5 * (a + b);
}

/** All real roots of the polynomial strictly inside (lo, hi), ascending. */
function rootsIn(c: readonly number[], lo: number, hi: number): number[] {
  if (c.length <= 1) return [];
  const crit = rootsIn(derivative(c), lo, hi);
  const pts = [lo, ...crit, hi];
  const roots: number[] = [];
  for (let i = 0; i + 1 < pts.length; i++) {
    const a = pts[i]!;
    const b = pts[i + 1]!;
    const pa = polyEval(c, a);
    const pb = polyEval(c, b);
    if (i > 0 && pa === 0) roots.push(a);
    else if (pa !== 0 && pb !== 0 && pa > 0 !== pb > 0) roots.push(bisectSignChange(c, a, b));
  }
  return roots;
}

/**
 * First s in (0, sMax] at which the polynomial Σ c[i] s^i (c[0] > 0) stops
 * being positive, i.e. the supremum of the interval [0, s*) on which it is
 * positive. Returns +∞ when it stays positive on (0, sMax]. With sMax = +∞
 * the search is bounded by the Cauchy bound 1 + max|c_i/c_n| on the roots.
 * Returns NaN when a coefficient is not finite.
 */
export function firstPositiveRoot(coeffs: ArrayLike<number>, sMax = Infinity): number {
  for (let i = 0; i < coeffs.length; i++) if (!Number.isFinite(coeffs[i]!)) return NaN;
  const c = trimmed(coeffs);
  if (c.length === 0 || !(c[0]! > 0)) return NaN;
  if (c.length === 1) return Infinity;
  let hi = sMax;
  if (!Number.isFinite(hi)) {
    const lead = Math.abs(c[c.length - 1]!);
    let m = 0;
    for (let i = 0; i + 1 < c.length; i++) m = Math.max(m, Math.abs(c[i]!) / lead);
    hi = 1 + m;
    if (!Number.isFinite(hi)) hi = Number.MAX_VALUE;
  }
  // Monotone pieces between critical points; the first piece whose end is ≤ 0 holds s*.
  const pts = [0, ...rootsIn(derivative(c), 0, hi), hi];
  for (let i = 0; i + 1 < pts.length; i++) {
    const a = pts[i]!;
    const b = pts[i + 1]!;
    if (polyEval(c, b) <= 0) return bisectDown(c, a, b);
  }
  return Infinity;
}

/**
 * A small cache of per-coefficient-vector limits: up to `slots` entries
 * keyed by four coefficients (unused ones passed as 0), each holding two
 * numbers computed by `compute(k1, k2, k3, k4, out2)`. Replacement is
 * round-robin. A key containing NaN never matches, so it is recomputed each
 * time (and `compute` is expected to return NaN limits for it).
 */
export class LimitCache {
  private readonly keys: Float64Array;
  private readonly values: Float64Array;
  private readonly slots: number;
  private next = 0;
  /** Slot of the last hit, tried first: consecutive calls usually come from one camera. */
  private last = 0;
  /** The two cached values of the last `lookup` (valid until the next call). */
  value0 = NaN;
  value1 = NaN;
  private readonly scratch = new Float64Array(2);

  constructor(
    private readonly compute: (k1: number, k2: number, k3: number, k4: number, out2: Float64Array) => void,
    slots = 8,
  ) {
    this.slots = slots;
    this.keys = new Float64Array(slots * 4).fill(NaN);
    this.values = new Float64Array(slots * 2).fill(NaN);
  }

  /** Sets value0/value1 for the given coefficients; returns value0. */
  lookup(k1: number, k2: number, k3: number, k4: number): number {
    const keys = this.keys;
    const l = this.last;
    if (keys[4 * l] === k1 && keys[4 * l + 1] === k2 && keys[4 * l + 2] === k3 && keys[4 * l + 3] === k4) {
      this.value0 = this.values[2 * l]!;
      this.value1 = this.values[2 * l + 1]!;
      return this.value0;
    }
    for (let i = 0, j = 0; i < this.slots; i++, j += 4) {
      if (keys[j] === k1 && keys[j + 1] === k2 && keys[j + 2] === k3 && keys[j + 3] === k4) {
        this.last = i;
        this.value0 = this.values[2 * i]!;
        this.value1 = this.values[2 * i + 1]!;
        return this.value0;
      }
    }
    const out = this.scratch;
    this.compute(k1, k2, k3, k4, out);
    const i = this.next;
    this.next = (i + 1) % this.slots;
    this.last = i;
    keys[4 * i] = k1;
    keys[4 * i + 1] = k2;
    keys[4 * i + 2] = k3;
    keys[4 * i + 3] = k4;
    this.values[2 * i] = out[0]!;
    this.values[2 * i + 1] = out[1]!;
    this.value0 = out[0]!;
    this.value1 = out[1]!;
    return this.value0;
  }
}
