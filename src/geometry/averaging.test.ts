import { describe, expect, it } from 'vitest';
import { mat3Mul, mat3Transpose } from '../linalg/small.js';
import { expectMatrixClose, gaussian, rng } from '../testing/numeric.js';
import {
  averagePoses,
  chordalMeanRotation,
  geometricMedian,
  meanTranslation,
  robustMeanRotation,
  robustMeanTranslation,
} from './averaging.js';
import type { Pose } from './se3.js';
import { so3Angle, so3Exp, so3Log } from './so3.js';

const DEG = Math.PI / 180;
/** Geodesic angle between two rotations, radians. */
const dist = (A: Float64Array, B: Float64Array) => so3Angle(mat3Mul(new Float64Array(9), A, mat3Transpose(new Float64Array(9), B)));

interface Scene {
  truth: Float64Array;
  samples: Float64Array[];
  outlier: boolean[];
}

/** n samples exp(noise)·truth with per-axis noise σ, then `bad` gross outliers 20°–170° away. */
function noisyRotations(seed: number, n: number, sigmaRad: number, bad: number): Scene {
  const u = rng(seed);
  const truth = so3Exp([0.4, -1.2, 2.0]);
  const samples: Float64Array[] = [];
  const outlier: boolean[] = [];
  for (let i = 0; i < n; i++) {
    samples.push(mat3Mul(new Float64Array(9), so3Exp([sigmaRad * gaussian(u), sigmaRad * gaussian(u), sigmaRad * gaussian(u)]), truth));
    outlier.push(false);
  }
  for (let i = 0; i < bad; i++) {
    // Outliers clustered on one side, the case that pulls a non-robust mean hardest.
    const ang = (20 + 150 * u()) * DEG;
    const ax = [1, 0.3 * u(), 0.3 * u()];
    const nrm = Math.hypot(...ax);
    samples.push(mat3Mul(new Float64Array(9), so3Exp(ax.map((a) => (a / nrm) * ang)), truth));
    outlier.push(true);
  }
  return { truth, samples, outlier };
}

describe('rotation averaging', () => {
  const scene = noisyRotations(1, 40, 0.3 * DEG, 8);

  it('chordal mean of clean samples is within 0.2° of the truth', () => {
    const clean = scene.samples.filter((_, i) => !scene.outlier[i]);
    expect(dist(chordalMeanRotation(clean), scene.truth)).toBeLessThan(0.2 * DEG);
  });

  it.each(['l1', 'huber'] as const)('%s: robust mean within 0.2° of truth while the chordal mean is pulled > 3° away; outliers flagged', (method) => {
    const chordal = chordalMeanRotation(scene.samples);
    expect(dist(chordal, scene.truth)).toBeGreaterThan(3 * DEG);
    const r = robustMeanRotation(scene.samples, { method, thresholdRad: 3 * DEG });
    expect(dist(r.R, scene.truth)).toBeLessThan(0.2 * DEG);
    expect(r.inliers).toEqual(scene.outlier.map((o) => !o));
    expect(r.converged).toBe(true);
    for (let i = 0; i < scene.samples.length; i++) expect(Math.abs(r.residualsRad[i]! - dist(scene.samples[i]!, r.R))).toBeLessThan(1e-12);
  });

  it('without refinement the L1 result satisfies the Weiszfeld optimality condition Σ v_i/|v_i| = 0', () => {
    const r = robustMeanRotation(scene.samples, { refineOnInliers: false });
    const g = [0, 0, 0];
    const RT = mat3Transpose(new Float64Array(9), r.R);
    for (const S of scene.samples) {
      const v = so3Log(mat3Mul(new Float64Array(9), S, RT));
      const n = Math.hypot(v[0]!, v[1]!, v[2]!);
      for (let k = 0; k < 3; k++) g[k]! += v[k]! / n;
    }
    expect(Math.hypot(...g)).toBeLessThan(1e-6);
  });

  it('rotations about one axis: the geodesic L1 average is the median angle (1-D median)', () => {
    const angles = [0.1, 0.12, 0.5, 0.13, -1.0, 0.11, 0.9];
    const r = robustMeanRotation(
      angles.map((a) => so3Exp([0, 0, a])),
      { refineOnInliers: false },
    );
    const sorted = angles.slice().sort((a, b) => a - b);
    expectMatrixClose(r.R, so3Exp([0, 0, sorted[3]!]), { abs: 1e-9 }, 'median rotation');
  });

  it('weighted 1-D case whose L1 minimiser is a sample away from the seed: reached and reported converged', () => {
    // Weights 2.5, 1, 1, 1 at angles 0, 0.1, 0.15, 0.6 about x: the cost's slope is 2.5 − 3 < 0 left of 0.1
    // and 2.5 + 1 − 2 > 0 right of it, so the minimiser is the sample at 0.1, where a plain Weiszfeld
    // step (pulled by the unbalanced others) would leave it.
    const r = robustMeanRotation(
      [0, 0.1, 0.15, 0.6].map((a) => so3Exp([a, 0, 0])),
      { weights: [2.5, 1, 1, 1], refineOnInliers: false },
    );
    expect(r.converged).toBe(true);
    // The medoid seed is that sample; the vertex test recognises it at once instead of stepping away and creeping back.
    expect(r.iterations).toBe(1);
    expectMatrixClose(r.R, so3Exp([0.1, 0, 0]), { abs: 1e-12 }, 'weighted median rotation');
  });

  it('weights: a weight of 2 equals a duplicated sample; zero weights remove samples', () => {
    const s = scene.samples.slice(0, 10);
    const w = Float64Array.from(s, (_, i) => (i === 3 ? 2 : 1));
    expectMatrixClose(chordalMeanRotation(s, w), chordalMeanRotation([...s, s[3]!]), { abs: 1e-14 }, 'chordal weighted');
    const zero = Float64Array.from(scene.samples, (_, i) => (scene.outlier[i] ? 0 : 1));
    const clean = scene.samples.filter((_, i) => !scene.outlier[i]);
    expectMatrixClose(chordalMeanRotation(scene.samples, zero), chordalMeanRotation(clean), { abs: 1e-14 }, 'zero weights');
    const a = robustMeanRotation(s, { weights: w, refineOnInliers: false });
    const b = robustMeanRotation([...s, s[3]!], { refineOnInliers: false });
    expectMatrixClose(a.R, b.R, { abs: 1e-9 }, 'robust weighted');
  });

  it('rejects misuse with RangeError', () => {
    expect(() => chordalMeanRotation([])).toThrow(RangeError);
    expect(() => robustMeanRotation(scene.samples, { weights: [1, 2] })).toThrow(/weights/);
    expect(() => chordalMeanRotation(scene.samples.slice(0, 2), [0, 0])).toThrow(/zero/);
    expect(() => chordalMeanRotation(scene.samples.slice(0, 2), [1, -1])).toThrow(/weight 1/);
  });
});

describe('translation averaging', () => {
  it('robust mean within 1 mm of truth while the plain mean is pulled > 10 mm away', () => {
    const u = rng(9);
    const truth = [0.2, -0.15, 0.05];
    const pts: number[][] = [];
    const outlier: boolean[] = [];
    for (let i = 0; i < 40; i++) {
      pts.push(truth.map((x) => x + 0.001 * gaussian(u)));
      outlier.push(false);
    }
    for (let i = 0; i < 8; i++) {
      pts.push(truth.map((x, k) => x + (k === 0 ? 0.1 + 0.2 * u() : 0.05 * u())));
      outlier.push(true);
    }
    const plain = meanTranslation(pts);
    expect(Math.hypot(...plain.map((x, k) => x - truth[k]!))).toBeGreaterThan(0.01);
    const r = robustMeanTranslation(pts, { thresholdM: 0.01 });
    expect(Math.hypot(...Array.from(r.t, (x, k) => x - truth[k]!))).toBeLessThan(0.001);
    expect(r.inliers).toEqual(outlier.map((o) => !o));
  });

  it('geometric median of an equilateral triangle is its centroid; of a general acute triangle the Fermat point (120° between directions)', () => {
    // Handbook fact: for a triangle whose angles are all below 120°, the point minimising the
    // sum of distances to the vertices sees every pair of vertices at 120° (Fermat–Torricelli point).
    const eq = [
      [1, 0, 0],
      [-0.5, Math.sqrt(3) / 2, 0],
      [-0.5, -Math.sqrt(3) / 2, 0],
    ];
    expectMatrixClose(geometricMedian(eq).t, [0, 0, 0], { abs: 1e-9 }, 'centroid');
    const tri = [
      [0, 0, 1],
      [4, 0, 1],
      [1, 3, 1],
    ];
    const gm = geometricMedian(tri, undefined, 10000, 1e-15);
    const dirs = tri.map((p) => {
      const d = p.map((x, k) => x - gm.t[k]!);
      const n = Math.hypot(...d);
      return d.map((x) => x / n);
    });
    for (const [a, b] of [[0, 1], [1, 2], [0, 2]] as const) {
      const c = dirs[a]!.reduce((s, x, k) => s + x * dirs[b]![k]!, 0);
      expect(Math.abs(c - Math.cos((2 * Math.PI) / 3))).toBeLessThan(1e-6);
    }
    expect(gm.t[2]).toBeCloseTo(1, 12);
  });

  it('weighted points whose minimiser is a sample away from the seed: reached exactly and reported converged', () => {
    // Three unit points 120° apart around a centre sample of weight 0.5: their unit directions sum to 0 ≤ 0.5,
    // so the centre is the minimiser; the component-wise weighted median seed is (cos 250°, sin 10°), elsewhere.
    const pts = [[0, 0, 0], ...[10, 130, 250].map((d) => [Math.cos(d * (Math.PI / 180)), Math.sin(d * (Math.PI / 180)), 0])];
    const g = geometricMedian(pts, [0.5, 1, 1, 1]);
    expect(g.converged).toBe(true);
    expect(g.iterations).toBeGreaterThan(1);
    expectMatrixClose(g.t, [0, 0, 0], { abs: 1e-12 }, 'weighted median');
  });

  it('collinear points: the geometric median is the 1-D median', () => {
    const xs = [0, 0.1, 0.2, 5, 9];
    expectMatrixClose(geometricMedian(xs.map((x) => [x, 2 * x, -x])).t, [0.2, 0.4, -0.2], { abs: 1e-9 }, 'median');
  });
});

describe('pose averaging', () => {
  it('combines relative poses from many frames; a frame with a bad rotation but plausible translation is an outlier', () => {
    const u = rng(17);
    const truth: Pose = { R: so3Exp([0.05, 1.5, -0.1]), t: Float64Array.from([0.3, 0.01, -0.02]) };
    const poses: Pose[] = [];
    for (let i = 0; i < 30; i++) {
      poses.push({
        R: mat3Mul(new Float64Array(9), so3Exp([0.002 * gaussian(u), 0.002 * gaussian(u), 0.002 * gaussian(u)]), truth.R),
        t: Float64Array.from(truth.t, (x) => x + 0.0005 * gaussian(u)),
      });
    }
    poses.push({ R: mat3Mul(new Float64Array(9), so3Exp([0, 0, 0.5]), truth.R), t: Float64Array.from(truth.t) });
    poses.push({ R: Float64Array.from(truth.R), t: Float64Array.from([0.5, 0.2, 0.1]) });
    poses.push({ R: so3Exp([2, 0, 0]), t: Float64Array.from([-1, 0, 0]) });
    const r = averagePoses(poses, { rotation: { thresholdRad: 1 * DEG }, translation: { thresholdM: 0.005 } });
    expect(dist(r.T.R, truth.R)).toBeLessThan(0.1 * DEG);
    expect(Math.hypot(...Array.from(r.T.t, (x, k) => x - truth.t[k]!))).toBeLessThan(0.0005);
    expect(r.inliers.slice(30)).toEqual([false, false, false]);
    expect(r.inliers.slice(0, 30).every(Boolean)).toBe(true);
    expect(r.converged).toBe(true);
    expect(r.rotationResidualsRad[30]).toBeCloseTo(0.5, 2);
    expect(r.translationResidualsM[31]).toBeGreaterThan(0.2);
  });
});
