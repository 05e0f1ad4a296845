/**
 * Camera-law suite, written once and run for every model and fixture:
 * Jacobians against central differences, unproject∘project and
 * project∘unproject round trips, invalid inputs reported as false.
 */
import fc from 'fast-check';
import { describe, expect, test } from 'vitest';
import { CAMERA_FIXTURES, type CameraFixture } from '../testing/camera-fixtures.js';
import { expectMatrixClose, numericJacobian, perturbVector, rng } from '../testing/numeric.js';
import { kannalaBrandtMaxTheta } from './kannala-brandt.js';
import { brownConradyMaxRadiusSquared } from './brown-conrady.js';
import { MIN_DEPTH_M } from './limits.js';

/**
 * Uniform doubles in [lo, hi] with some weight on the ends. (fc.double over a
 * range puts most samples on its bounds, which would leave the interior of
 * the image untested.)
 */
function uniform(lo: number, hi: number): fc.Arbitrary<number> {
  const N = 1_000_000_000;
  return fc.integer({ min: 0, max: N }).map((i) => lo + ((hi - lo) * i) / N);
}

/** Central differences with a step per coordinate: h_i = 1e-6·max(1, |x_i|). */
function numericJacobianScaled(f: (x: Float64Array) => ArrayLike<number>, x: Float64Array): Float64Array {
  const m = f(x).length;
  const n = x.length;
  const J = new Float64Array(m * n);
  for (let i = 0; i < n; i++) {
    const h = 1e-6 * Math.max(1, Math.abs(x[i]!));
    const col = numericJacobian(f, x, n, (y, j, s) => (j === i ? perturbVector(y, j, s) : y), h);
    for (let r = 0; r < m; r++) J[r * n + i] = col[r * n + i]!;
  }
  return J;
}

function projectOrThrow(f: CameraFixture, p: ArrayLike<number>, params: ArrayLike<number> = f.params): Float64Array {
  const uv = new Float64Array(2);
  if (!f.model.project(params, p, uv)) throw new Error(`projection invalid at p = [${Array.from(p).join(', ')}]`);
  return uv;
}

/** Largest valid incidence angle of the fixture (radians), for perspective models < π/2. */
function validAngle(f: CameraFixture): number {
  const k = f.params;
  if (f.model.name === 'kannala-brandt') return kannalaBrandtMaxTheta(k[4]!, k[5]!, k[6]!, k[7]!);
  if (f.model.name === 'brown-conrady') return Math.atan(Math.sqrt(brownConradyMaxRadiusSquared(k[4]!, k[5]!, k[8]!)));
  return Math.PI / 2;
}

/** A point at incidence angle theta, azimuth phi, distance rho. */
function pointAt(theta: number, phi: number, rho: number): Float64Array {
  return Float64Array.from([rho * Math.sin(theta) * Math.cos(phi), rho * Math.sin(theta) * Math.sin(phi), rho * Math.cos(theta)]);
}

/** Sample points: deliberate cases plus random valid points, all strictly inside the valid region. */
function samplePoints(f: CameraFixture): { what: string; p: Float64Array }[] {
  const out: { what: string; p: Float64Array }[] = [
    { what: 'on the optical axis', p: Float64Array.from([0, 0, 2.5]) },
    { what: 'θ = 1e-8', p: pointAt(1e-8, 0.7, 1.3) },
    { what: 'θ = 1e-5 (Taylor branch)', p: pointAt(1e-5, -2.1, 0.8) },
    { what: 'θ just below the Taylor switch', p: pointAt(9e-5, -0.4, 0.6) },
    { what: 'θ just above the Taylor switch', p: pointAt(1.2e-4, 2.5, 3.0) },
  ];
  const ray = new Float64Array(3);
  const corners = [
    [0, 0],
    [f.width - 1, 0],
    [0, f.height - 1],
    [f.width - 1, f.height - 1],
  ];
  for (const [u, v] of corners) {
    // Corner pixels, or (when the corner is outside the valid region) the farthest valid pixel on the way there.
    let ok = false;
    for (let s = 1; !ok && s > 0.05; s -= 0.1) {
      ok = f.model.unproject(f.params, [(1 - s) * f.params[2]! + s * u!, (1 - s) * f.params[3]! + s * v!], ray);
    }
    expect(ok).toBe(true);
    out.push({ what: `near image corner (${u}, ${v})`, p: Float64Array.from([ray[0]! * 4, ray[1]! * 4, ray[2]! * 4]) });
  }
  const tmax = validAngle(f);
  if (f.model.name === 'kannala-brandt') {
    for (const deg of [89, 90, 91, 120, 150, 175]) {
      const th = (deg * Math.PI) / 180;
      if (th < tmax - 0.01) out.push({ what: `fisheye θ = ${deg}°`, p: pointAt(th, 0.3 * deg, 2) });
    }
  }
  const u = rng(1234 + f.label.length);
  for (let i = 0; i < 40; i++) {
    const th = Math.min(0.97 * tmax, Math.PI * 0.97) * u();
    out.push({ what: `random #${i}`, p: pointAt(th, 2 * Math.PI * u(), 0.2 + 10 * u()) });
  }
  return out;
}

describe.each(CAMERA_FIXTURES.map((f) => [f.label, f] as const))('camera laws: %s', (_label, f) => {
  const model = f.model;
  const n = model.numParams;

  test('parameter layout is consistent', () => {
    expect(model.paramNames.length).toBe(n);
    expect(model.numDistortion).toBe(n - 4);
    expect(model.paramNames.slice(0, 4)).toEqual(['fx', 'fy', 'cx', 'cy']);
    expect(f.params.length).toBe(n);
  });

  test.each(samplePoints(f).map((s) => [s.what, s.p] as const))('J_uv_p and J_uv_intr match central differences: %s', (_what, p) => {
    const uv = new Float64Array(2);
    const J_uv_p = new Float64Array(6);
    const J_uv_intr = new Float64Array(2 * n);
    expect(model.project(f.params, p, uv, J_uv_p, J_uv_intr)).toBe(true);
    // The Jacobian requests must not change the projection.
    const uv0 = projectOrThrow(f, p);
    expect(Array.from(uv)).toEqual(Array.from(uv0));
    const hp = 1e-6 * Math.hypot(p[0]!, p[1]!, p[2]!);
    const Jp = numericJacobian((q: Float64Array) => projectOrThrow(f, q), p, 3, perturbVector, hp);
    expectMatrixClose(J_uv_p, Jp, { rel: 1e-6 }, 'J_uv_p');
    const Ji = numericJacobianScaled((k: Float64Array) => projectOrThrow(f, p, k), f.params);
    expectMatrixClose(J_uv_intr, Ji, { rel: 1e-6 }, 'J_uv_intr');
  });

  test('J_uv_p · p = 0: the projection depends on the direction of p only', () => {
    const uv = new Float64Array(2);
    const J = new Float64Array(6);
    for (const { what, p } of samplePoints(f)) {
      expect(model.project(f.params, p, uv, J)).toBe(true);
      const pn = Math.hypot(p[0]!, p[1]!, p[2]!);
      const jn = Math.max(...Array.from(J, Math.abs));
      for (let r = 0; r < 2; r++) {
        const dot = J[3 * r]! * p[0]! + J[3 * r + 1]! * p[1]! + J[3 * r + 2]! * p[2]!;
        expect(Math.abs(dot), `${what}, row ${r}`).toBeLessThan(1e-13 * jn * pn);
      }
    }
  });

  test('pixel → unproject → project returns the pixel (< 1e-9 px) with a unit ray', () => {
    const ray = new Float64Array(3);
    const uv = new Float64Array(2);
    let checked = 0;
    fc.assert(
      fc.property(
        uniform(0, f.width - 1),
        uniform(0, f.height - 1),
        uniform(0.05, 50),
        (u, v, depth) => {
          const ok = model.unproject(f.params, [u, v], ray);
          if (!f.imageFullyValid && !ok) return true;
          expect(ok).toBe(true);
          expect(Math.abs(Math.hypot(ray[0]!, ray[1]!, ray[2]!) - 1)).toBeLessThan(1e-14);
          const p = [ray[0]! * depth, ray[1]! * depth, ray[2]! * depth];
          expect(model.project(f.params, p, uv)).toBe(true);
          expect(Math.hypot(uv[0]! - u, uv[1]! - v)).toBeLessThan(1e-9);
          checked++;
          return true;
        },
      ),
      { numRuns: 3000 },
    );
    // The fixtures whose fold lies inside the image still have most (BC) or about 40% (KB) of it valid.
    expect(checked).toBeGreaterThan(600);
  });

  test('point → project → unproject returns the bearing (< 1e-10 rad) inside the image', () => {
    const tmax = validAngle(f);
    const uv = new Float64Array(2);
    const ray = new Float64Array(3);
    fc.assert(
      fc.property(
        // Up to 98% of the valid angle: at the fold dθ_d/dθ → 0, so a pixel fixes the bearing only to ε/(dθ_d/dθ).
        uniform(0, 0.98 * Math.min(tmax, Math.PI)),
        uniform(-Math.PI, Math.PI),
        uniform(0.05, 50),
        (theta, phi, rho) => {
          const p = pointAt(theta, phi, rho);
          expect(model.project(f.params, p, uv)).toBe(true);
          if (!(uv[0]! >= 0 && uv[0]! <= f.width - 1 && uv[1]! >= 0 && uv[1]! <= f.height - 1)) return true;
          expect(model.unproject(f.params, uv, ray)).toBe(true);
          const b = [p[0]! / rho, p[1]! / rho, p[2]! / rho];
          const cx = b[1]! * ray[2]! - b[2]! * ray[1]!;
          const cy = b[2]! * ray[0]! - b[0]! * ray[2]!;
          const cz = b[0]! * ray[1]! - b[1]! * ray[0]!;
          const angle = Math.atan2(Math.hypot(cx, cy, cz), b[0]! * ray[0]! + b[1]! * ray[1]! + b[2]! * ray[2]!);
          expect(angle).toBeLessThan(1e-10);
          return true;
        },
      ),
      { numRuns: 3000 },
    );
  });

  test('unprojectToPlane gives (x/z, y/z) of the unprojected ray for forward rays', () => {
    const ray = new Float64Array(3);
    const xy = new Float64Array(2);
    const u = rng(99);
    let forward = 0;
    for (let i = 0; i < 500; i++) {
      const px = [u() * (f.width - 1), u() * (f.height - 1)];
      const okRay = model.unproject(f.params, px, ray);
      const okPlane = model.unprojectToPlane(f.params, px, xy);
      expect(okPlane).toBe(okRay && ray[2]! > 0);
      if (!okPlane) continue;
      forward++;
      expect(Math.abs(xy[0]! - ray[0]! / ray[2]!)).toBeLessThan(1e-12 * Math.max(1, Math.abs(xy[0]!)));
      expect(Math.abs(xy[1]! - ray[1]! / ray[2]!)).toBeLessThan(1e-12 * Math.max(1, Math.abs(xy[1]!)));
    }
    expect(forward).toBeGreaterThan(100);
  });

  test('invalid points report false, never NaN', () => {
    const uv = new Float64Array(2);
    const J_uv_p = new Float64Array(6);
    const J_uv_intr = new Float64Array(2 * n);
    const tmax = validAngle(f);
    const invalid: number[][] = [
      [0, 0, 0],
      [NaN, 0, 1],
      [0, Infinity, 1],
      [0, 0, NaN],
      [0, 0, -1], // straight behind: θ = π
    ];
    if (model.name !== 'kannala-brandt') {
      invalid.push([0.1, 0.2, -3], [1, 1, 0], [0.5, -0.2, -0.0], [1e-3, 0, MIN_DEPTH_M], [1e-3, 0, 0.5 * MIN_DEPTH_M], [5, -3, -1e-9]);
    }
    if (tmax < Math.PI) {
      invalid.push(Array.from(pointAt(tmax * 1.0001, 0.4, 2)), Array.from(pointAt(Math.min(Math.PI - 1e-3, tmax * 1.3), -1.9, 5)));
    }
    for (const p of invalid) {
      expect(model.project(f.params, p, uv), `p = [${p.join(', ')}]`).toBe(false);
      expect(model.project(f.params, p, uv, J_uv_p, J_uv_intr), `p = [${p.join(', ')}] with Jacobians`).toBe(false);
    }
    // Every projection reported valid is finite, including near the limits.
    const u = rng(7);
    for (let i = 0; i < 2000; i++) {
      const th = Math.min(Math.PI, 1.5 * tmax) * u();
      const p = pointAt(th, 2 * Math.PI * u(), 10 ** (6 * u() - 3));
      if (model.project(f.params, p, uv, J_uv_p, J_uv_intr)) {
        expect(th).toBeLessThan(tmax);
        for (const v of [...uv, ...J_uv_p, ...J_uv_intr]) expect(Number.isFinite(v)).toBe(true);
      } else {
        // Fails only outside the valid region (angle beyond the limit, or at/behind the depth limit).
        expect(th >= tmax * (1 - 1e-12) || p[2]! <= MIN_DEPTH_M).toBe(true);
      }
    }
  });

  test('pixels that are not finite do not unproject', () => {
    const ray = new Float64Array(3);
    const xy = new Float64Array(2);
    for (const px of [
      [NaN, 10],
      [10, Infinity],
    ]) {
      expect(model.unproject(f.params, px, ray)).toBe(false);
      expect(model.unprojectToPlane(f.params, px, xy)).toBe(false);
    }
  });
});
