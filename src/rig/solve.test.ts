/**
 * Rig solver against synthetic ground truth (simulate → solve), statistical
 * consistency of the reported covariance, outliers and flipped views.
 */
import { describe, expect, test } from 'vitest';
import { bundledRig, poseError } from '../testing/rig-fixtures.js';
import { boxMinus, type Pose } from '../geometry/se3.js';
import { spdInverse } from '../linalg/small.js';
import { simulate } from './simulate.js';
import { sessionFromSimulation } from './simulate-session.js';
import { relativeCovariance, solveRig, type RigSolution } from './solve.js';
import type { CapturePlan } from './description.js';

const rig = bundledRig;

function errors(sol: RigSolution, truth: Map<string, Pose>): { name: string; rotDeg: number; transMm: number; delta: Float64Array }[] {
  return sol.cameras.map((c) => {
    const T_true = truth.get(c.name)!;
    const delta = boxMinus(c.T_ref_cam, T_true); // left perturbation: T_est = exp(δ)·T_true
    return { name: c.name, ...poseError(c.T_ref_cam, T_true), delta };
  });
}

function solveSimulated(file: string, plan: Partial<CapturePlan>) {
  const sim = simulate(rig(file), plan);
  const sol = solveRig(sessionFromSimulation(sim));
  return { sim, sol, err: errors(sol, sim.T_ref_cam) };
}

describe('ground-truth recovery at 0.3 px noise', () => {
  test('stereo pair: rotation < 0.02°, translation < 1 mm', () => {
    const { sol, err } = solveSimulated('stereo-bench.yaml', { frames: 40, pixelNoisePx: 0.3, seed: 3 });
    expect(sol.converged).toBe(true);
    for (const e of err) {
      expect(e.rotDeg).toBeLessThan(0.02);
      expect(e.transMm).toBeLessThan(1);
    }
    expect(sol.sigma0).toBeGreaterThan(0.9);
    expect(sol.sigma0).toBeLessThan(1.1);
  });

  test('surround ring with cameras that share no frame with the reference: chained, rotation < 0.02°, translation < 1 mm', () => {
    const { sim, sol, err } = solveSimulated('surround-6.yaml', { frames: 600, pixelNoisePx: 0.3, seed: 5 });
    const names = sim.description.cameras.map((c) => c.spec.name);
    const ref = names.indexOf('front_center');
    // The rear cameras never see the target together with the reference camera…
    const framesOf = (cam: string) => new Set(sim.views.filter((v) => v.camera === cam).map((v) => v.frame));
    const refFrames = framesOf('front_center');
    for (const rear of ['rear_left', 'rear_center', 'rear_right']) {
      expect([...framesOf(rear)].some((f) => refFrames.has(f))).toBe(false);
      // …so the initial spanning tree reaches them through another camera.
      expect(sol.initParent[names.indexOf(rear)]).not.toBe(ref);
    }
    expect(sol.converged).toBe(true);
    for (const e of err) {
      expect(e.rotDeg, e.name).toBeLessThan(0.02);
      expect(e.transMm, e.name).toBeLessThan(1);
    }
  });
});

describe('outliers', () => {
  test('5 % gross outliers and one 180°-flipped view: error within 1.5x the clean error, bad views reported', () => {
    const plan = { frames: 60, pixelNoisePx: 0.3, seed: 21 };
    const clean = solveSimulated('surround-6.yaml', { ...plan, frames: 400 });
    const dirty = solveSimulated('surround-6.yaml', { ...plan, frames: 400, outlierFraction: 0.05, flippedViews: 1 });
    const flipped = dirty.sim.views.filter((v) => v.flipped);
    expect(flipped.length).toBe(1);
    for (const f of flipped) {
      expect(dirty.sol.rejectedViews.some((r) => r.frame === f.frame && r.camera === f.camera)).toBe(true);
    }
    // Gross detections are rejected: at least 90 % of the injected ones are not used.
    const injected = dirty.sim.views.flatMap((v) => v.outliers);
    const stillUsed = injected.filter((i) => dirty.sol.detectionUsed[i] === 1).length;
    expect(stillUsed / injected.length).toBeLessThan(0.1);
    const worst = (e: { rotDeg: number; transMm: number }[]) => ({
      rot: Math.max(...e.map((x) => x.rotDeg)),
      trans: Math.max(...e.map((x) => x.transMm)),
    });
    const c = worst(clean.err);
    const d = worst(dirty.err);
    // 1.5x the clean error, with a floor at the clean solve's own 1-sigma scale (both are noise-limited).
    expect(d.rot).toBeLessThan(1.5 * Math.max(c.rot, 0.005));
    expect(d.trans).toBeLessThan(1.5 * Math.max(c.trans, 0.3));
  });
});

/**
 * Chi-square quantile by the Wilson–Hilferty approximation (handbook formula:
 * Abramowitz & Stegun 26.4.17): χ²_k(p) ≈ k (1 − 2/(9k) + z_p sqrt(2/(9k)))³.
 */
function chi2Quantile(k: number, z: number): number {
  const a = 2 / (9 * k);
  return k * Math.pow(1 - a + z * Math.sqrt(a), 3);
}

describe('statistical consistency of the covariance (150 noise realisations)', () => {
  test('mean NEES inside the χ²₆ 95 % band and 1-sigma within 15 % of the empirical spread', () => {
    const runs = 150;
    const desc = rig('stereo-bench.yaml');
    const nees: number[] = [];
    const deltas: Float64Array[] = [];
    const sigmas: Float64Array[] = [];
    for (let s = 0; s < runs; s++) {
      // Same capture geometry (seed 100 fixes the board poses); only the noise differs.
      const sim = simulate(desc, { frames: 25, pixelNoisePx: 0.3, seed: 100, noiseSeed: 1000 + s });
      const sol = solveRig(sessionFromSimulation(sim));
      const cam = sol.cameras.find((c) => c.name === 'right')!;
      const delta = boxMinus(cam.T_ref_cam, sim.T_ref_cam.get('right')!);
      const info = spdInverse(cam.covariance, 6)!;
      let q = 0;
      for (let i = 0; i < 6; i++) for (let j = 0; j < 6; j++) q += delta[i]! * info[i * 6 + j]! * delta[j]!;
      nees.push(q);
      deltas.push(delta);
      sigmas.push(Float64Array.from({ length: 6 }, (_, i) => Math.sqrt(cam.covariance[i * 7]!)));
    }
    const mean = nees.reduce((a, b) => a + b, 0) / runs;
    // runs · mean NEES ~ χ²(6 · runs); 95 % two-sided band.
    const lo = chi2Quantile(6 * runs, -1.959964) / runs;
    const hi = chi2Quantile(6 * runs, 1.959964) / runs;
    expect(mean).toBeGreaterThan(lo);
    expect(mean).toBeLessThan(hi);
    // Empirical spread per axis vs the mean reported 1-sigma, averaged over the six axes.
    let ratioSum = 0;
    for (let i = 0; i < 6; i++) {
      const m = deltas.reduce((a, d) => a + d[i]!, 0) / runs;
      const sd = Math.sqrt(deltas.reduce((a, d) => a + (d[i]! - m) ** 2, 0) / (runs - 1));
      const reported = sigmas.reduce((a, s) => a + s[i]!, 0) / runs;
      ratioSum += sd / reported;
    }
    const ratio = ratioSum / 6;
    expect(Math.abs(ratio - 1)).toBeLessThan(0.15);
  });
});

describe('relative covariance between any two cameras', () => {
  test('matches a Monte-Carlo-free identity: cov(T_a_b) of a camera with the reference equals its own covariance mapped by the adjoint', () => {
    const { sol } = solveSimulated('stereo-bench.yaml', { frames: 30, seed: 8 });
    const ref = sol.reference;
    const other = 1 - ref;
    // T_ref_other: relative covariance with the (fixed) reference is the camera's own covariance.
    const rel = relativeCovariance(sol, ref, other);
    const own = sol.cameras[other]!.covariance;
    for (let i = 0; i < 36; i++) expect(rel[i]!).toBeCloseTo(own[i]!, 15);
    // Symmetry of the two directions' variances of the rotation angle.
    const back = relativeCovariance(sol, other, ref);
    const trR = (S: Float64Array) => S[0]! + S[7]! + S[14]!;
    expect(trR(back)).toBeCloseTo(trR(rel), 12);
  });
});
