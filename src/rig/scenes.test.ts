/**
 * Ground-truth recovery for the wider capture kinds: calibration rooms
 * (fixed_targets), fisheye rigs, joint intrinsics initialised by Zhang's
 * method, design priors; and the statistical consistency of the intrinsic
 * covariance.
 */
import { describe, expect, test } from 'vitest';
import { bundledRig, poseError } from '../testing/rig-fixtures.js';
import type { Pose } from '../geometry/se3.js';
import { spdInverse } from '../linalg/small.js';
import { simulate } from './simulate.js';
import { sessionFromSimulation } from './simulate-session.js';
import { solveRig, type RigSolution } from './solve.js';
import { RigSolveError } from './errors.js';

const rig = bundledRig;

/** Every camera of the solution within maxDeg and maxMm of the simulation's truth. */
function expectCamerasRecovered(sol: RigSolution, truth: Map<string, Pose>, maxDeg: number, maxMm: number): void {
  for (const c of sol.cameras) {
    const e = poseError(c.T_ref_cam, truth.get(c.name)!);
    expect(e.rotDeg, c.name).toBeLessThan(maxDeg);
    expect(e.transMm, c.name).toBeLessThan(maxMm);
  }
}

describe('calibration room (fixed_targets)', () => {
  test('service bay: cameras (rotation < 0.02°, translation < 1 mm) and wall targets 2-3 m away (< 0.06°, < 2 mm) recovered', () => {
    const sim = simulate(rig('service-bay.yaml'), { frames: 120, pixelNoisePx: 0.3, seed: 12 });
    const sol = solveRig(sessionFromSimulation(sim));
    expect(sol.converged).toBe(true);
    expectCamerasRecovered(sol, sim.T_ref_cam, 0.02, 1);
    expect(sol.targets.map((t) => t.name)).toEqual(sim.description.targets.map((t) => t.spec.name));
    for (const t of sol.targets) {
      const e = poseError(t.T_origin_target, sim.T_origin_target.get(t.name)!);
      expect(e.rotDeg, t.name).toBeLessThan(0.06);
      expect(e.transMm, t.name).toBeLessThan(2);
    }
  });
});

describe('fisheye (Kannala–Brandt) rig', () => {
  test('three ~180° cameras 120° apart: rotation < 0.02°, translation < 1 mm', () => {
    const sim = simulate(rig('drone-fisheye-3.yaml'), { frames: 150, pixelNoisePx: 0.3, seed: 4 });
    const sol = solveRig(sessionFromSimulation(sim));
    expect(sol.converged).toBe(true);
    expectCamerasRecovered(sol, sim.T_ref_cam, 0.02, 1);
  });
});

describe('joint intrinsics', () => {
  test("intrinsics omitted from the session: Zhang's initialisation, then refinement recovers intrinsics and extrinsics", () => {
    const desc = rig('stereo-bench.yaml');
    for (const c of desc.cameras) {
      c.spec.solveIntrinsics = true;
      c.spec.fixedIntrinsics = ['k3'];
    }
    const sim = simulate(desc, { frames: 60, pixelNoisePx: 0.3, seed: 4 });
    const session = sessionFromSimulation(sim);
    for (const c of session.cameras) {
      c.intrinsicsGiven = false;
      c.params.fill(0);
    }
    const sol = solveRig(session);
    expect(sol.converged).toBe(true);
    for (const c of sol.cameras) {
      const truth = desc.cameras[c.index]!.spec.params;
      expect(Math.abs(c.intrinsics[0]! / truth[0]! - 1), `${c.name} fx`).toBeLessThan(2e-3);
      expect(Math.abs(c.intrinsics[1]! / truth[1]! - 1), `${c.name} fy`).toBeLessThan(2e-3);
      expect(Math.abs(c.intrinsics[2]! - truth[2]!), `${c.name} cx`).toBeLessThan(1.5);
      expect(Math.abs(c.intrinsics[3]! - truth[3]!), `${c.name} cy`).toBeLessThan(1.5);
      expect(Math.abs(c.intrinsics[4]! - truth[4]!), `${c.name} k1`).toBeLessThan(0.01);
      expect(c.intrinsics[8]).toBe(0); // k3 held fixed
      const sigma = c.intrinsicsCovariance!;
      expect(sigma[8 * 9 + 8]).toBe(0);
      const e = poseError(c.T_ref_cam, sim.T_ref_cam.get(c.name)!);
      expect(e.rotDeg).toBeLessThan(0.05);
      expect(e.transMm).toBeLessThan(2);
    }
  });

  test('NEES of the intrinsic parameters over 30 noise realisations lies in the χ² 95 % band', () => {
    const desc = rig('stereo-bench.yaml');
    for (const c of desc.cameras) {
      c.spec.solveIntrinsics = true;
      c.spec.fixedIntrinsics = ['k3'];
    }
    const runs = 30;
    const free = [0, 1, 2, 3, 4, 5, 6, 7]; // k3 held fixed
    const k = free.length;
    let sum = 0;
    for (let s = 0; s < runs; s++) {
      const sim = simulate(desc, { frames: 30, pixelNoisePx: 0.3, seed: 200, noiseSeed: 500 + s });
      const sol = solveRig(sessionFromSimulation(sim));
      const cam = sol.cameras.find((c) => c.name === 'right')!;
      const truth = desc.cameras[cam.index]!.spec.params;
      const C = cam.intrinsicsCovariance!;
      const sub = new Float64Array(k * k);
      free.forEach((i, a) => free.forEach((j, b) => (sub[a * k + b] = C[i * 9 + j]!)));
      const info = spdInverse(sub, k)!;
      const d = free.map((i) => cam.intrinsics[i]! - truth[i]!);
      let q = 0;
      for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) q += d[a]! * info[a * k + b]! * d[b]!;
      sum += q;
    }
    const mean = sum / runs;
    // runs · mean ~ χ²(k · runs); Wilson–Hilferty quantiles (Abramowitz & Stegun 26.4.17).
    const wh = (n: number, z: number) => n * Math.pow(1 - 2 / (9 * n) + z * Math.sqrt(2 / (9 * n)), 3);
    expect(mean).toBeGreaterThan(wh(k * runs, -1.959964) / runs);
    expect(mean).toBeLessThan(wh(k * runs, 1.959964) / runs);
  });
});

describe('design priors', () => {
  test('a camera group the data cannot link is placed by the prior; without it the solve stops with the groups named', () => {
    const desc = rig('surround-6.yaml');
    // Few frames and no pairing toward the rear: the rear cameras form their own group.
    const sim = simulate(desc, { frames: 200, seed: 31 });
    const keep = sim.views.filter((v) => !(v.camera.startsWith('rear') && sim.views.some((w) => w.frame === v.frame && !w.camera.startsWith('rear'))));
    const dropFrames = new Set(sim.views.filter((v) => !keep.includes(v)).map((v) => v.frame));
    sim.detections = sim.detections.filter((d) => !dropFrames.has(d.frame));
    const session = sessionFromSimulation(sim);
    expect(() => solveRig(session)).toThrow(RigSolveError);
    expect(() => solveRig(session)).toThrow(/no frame links \{[^}]*rear_left[^}]*\}/);
    const sol = solveRig(session, { prior: desc });
    expect(sol.warnings.some((w) => /design prior alone/.test(w))).toBe(true);
    for (const c of sol.cameras) {
      const e = poseError(c.T_ref_cam, sim.T_ref_cam.get(c.name)!);
      if (!c.isReference) expect(c.sigmasFromDesign).toBeDefined();
      // The design here is the truth, and the data agree: small errors, within the design sigmas (10 mm, 2°).
      expect(e.transMm, c.name).toBeLessThan(10);
      expect(e.rotDeg, c.name).toBeLessThan(2);
    }
  });

  test('a prior far from the data: the summary reports the distance in sigmas', () => {
    const desc = rig('stereo-bench.yaml');
    const sim = simulate(desc, { frames: 30, seed: 6 });
    const prior = rig('stereo-bench.yaml');
    // The drawing is 15 mm off for the right camera (design sigma 5 mm).
    prior.cameras[1]!.T_body_cam.t[2]! += 0.015;
    const sol = solveRig(sessionFromSimulation(sim), { prior });
    const right = sol.cameras.find((c) => c.name === 'right')!;
    expect(right.sigmasFromDesign!).toBeGreaterThan(2.5);
    expect(right.sigmasFromDesign!).toBeLessThan(3.5);
    const e = poseError(right.T_ref_cam, sim.T_ref_cam.get('right')!);
    expect(e.transMm).toBeLessThan(1);
  });
});

describe('partial views and rigid point sets', () => {
  test('checkerboards cut by the image border (partial views) work through every stage', () => {
    const sim = simulate(rig('stereo-bench.yaml'), { frames: 60, pixelNoisePx: 0.3, seed: 41, minVisibleFraction: 0.4, distanceM: [0.5, 1.2] });
    const full = sim.description.targets[0]!.spec.numPoints;
    const partial = sim.views.filter((v) => v.end - v.first < full);
    expect(partial.length).toBeGreaterThan(5);
    const sol = solveRig(sessionFromSimulation(sim));
    expect(sol.converged).toBe(true);
    const e = poseError(sol.cameras[1]!.T_ref_cam, sim.T_ref_cam.get('right')!);
    expect(e.rotDeg).toBeLessThan(0.02);
    expect(e.transMm).toBeLessThan(1);
  });

  test('a non-planar rigid point set (EPnP initialisation) with occluded points', () => {
    const desc = rig('stereo-bench.yaml');
    // A 3-D marker frame: two perpendicular plates of 4x3 points, 0.1 m spacing.
    const pts: number[] = [];
    for (let i = 0; i < 4; i++) for (let j = 0; j < 3; j++) pts.push(0.1 * i, 0.1 * j, 0);
    for (let i = 0; i < 4; i++) for (let k = 1; k <= 3; k++) pts.push(0.1 * i, 0, -0.1 * k);
    desc.targets = [{ spec: { name: 'marker_frame', kind: 'points', points: Float64Array.from(pts), numPoints: pts.length / 3 } }];
    const sim = simulate(desc, { frames: 60, pixelNoisePx: 0.3, seed: 8, minVisibleFraction: 0.8 });
    const sol = solveRig(sessionFromSimulation(sim));
    expect(sol.converged).toBe(true);
    const e = poseError(sol.cameras[1]!.T_ref_cam, sim.T_ref_cam.get('right')!);
    expect(e.rotDeg).toBeLessThan(0.05);
    expect(e.transMm).toBeLessThan(1);
  });
});

describe('views set aside while intrinsics were rough', () => {
  test('a view with a high PnP error under the initial intrinsics is re-admitted once they are refined', () => {
    const desc = rig('stereo-bench.yaml');
    for (const c of desc.cameras) {
      c.spec.solveIntrinsics = true;
      c.spec.fixedIntrinsics = ['k3'];
    }
    // Seed 11, 60 frames: frame f00033 of camera left has a PnP RMS of 5.1 px under Zhang's initial intrinsics.
    const sim = simulate(desc, { frames: 60, seed: 11 });
    const session = sessionFromSimulation(sim);
    for (const c of session.cameras) c.intrinsicsGiven = false;
    const sol = solveRig(session);
    expect(sol.rejectedViews.filter((v) => v.status === 'pnp_outlier')).toEqual([]);
    expect(sol.rejectedViews.some((v) => v.frame === 'f00033')).toBe(false);
  });
});
