/**
 * check and compare on simulated rigs with known truth: a knocked camera is
 * flagged (and only it), an unchanged rig passes with fresh data, and the
 * fixed-extrinsics solve reproduces the noise level on the true extrinsics.
 */
import { beforeAll, describe, expect, test } from 'vitest';
import { knockCamera, threeCameraBench } from '../testing/check-fixtures.js';
import { boxMinus, compose, inverse } from '../geometry/se3.js';
import { so3Angle } from '../geometry/so3.js';
import { simulate } from './simulate.js';
import { sessionFromSimulation } from './simulate-session.js';
import { solveRig } from './solve.js';
import { buildRigFile } from './output.js';
import { checkRig } from './check.js';
import { compareRigFiles, DEFAULT_TOLERANCES } from './compare.js';
import type { RigFile } from '../io/types.js';

const desc = threeCameraBench();
let reference: RigFile;

beforeAll(() => {
  // The reference calibration: 40 frames, its own geometry and noise.
  reference = buildRigFile(solveRig(sessionFromSimulation(simulate(desc, { frames: 40, seed: 7, pixelNoisePx: 0.3 }))));
});

describe('fixed-extrinsics solve', () => {
  test('on the true extrinsics, per-camera RMS matches the fresh solve to 5 % and no camera block moves', () => {
    const sim = simulate(desc, { frames: 20, seed: 31, pixelNoisePx: 0.3 });
    const fixed = solveRig(sessionFromSimulation(sim), { fixedExtrinsics: sim.T_ref_cam });
    const free = solveRig(sessionFromSimulation(sim));
    for (const c of fixed.cameras) {
      const truth = sim.T_ref_cam.get(c.name)!;
      expect(Math.max(...boxMinus(c.T_ref_cam, truth).map(Math.abs))).toBeLessThan(1e-12);
      const freeRms = free.cameras.find((x) => x.name === c.name)!.rmsPx;
      expect(Math.abs(c.rmsPx / freeRms - 1), c.name).toBeLessThan(0.05);
      expect(c.covariance.every((v) => v === 0)).toBe(true);
    }
    // 0.3 px per axis: E|e|² = 2·0.09, so RMS ≈ 0.42 px.
    expect(fixed.rmsPx).toBeGreaterThan(0.38);
    expect(fixed.rmsPx).toBeLessThan(0.47);
    expect(fixed.sigma0).toBeGreaterThan(0.9);
    expect(fixed.sigma0).toBeLessThan(1.1);
  });

  test('a camera missing from the fixed set is an error naming it', () => {
    const sim = simulate(desc, { frames: 5, seed: 2 });
    const partial = new Map(sim.T_ref_cam);
    partial.delete('middle');
    expect(() => solveRig(sessionFromSimulation(sim), { fixedExtrinsics: partial })).toThrow(/middle/);
  });
});

describe('check after a knock', () => {
  test('camera "right" moved by 2 mm and 0.2°: flagged, and only it; its held-fixed RMS grows most', () => {
    const knocked = knockCamera(desc, 'right', [0, 0.002 / Math.SQRT2, 0.002 / Math.SQRT2], [0, 0, 1], 0.2);
    const sim = simulate(knocked, { frames: 20, seed: 41, pixelNoisePx: 0.3 });
    // The knock as the truth sees it, in the reference camera's frame.
    const before = simulate(desc, { frames: 1, seed: 41 }).T_ref_cam.get('right')!;
    const after = sim.T_ref_cam.get('right')!;
    expect(1000 * Math.hypot(after.t[0]! - before.t[0]!, after.t[1]! - before.t[1]!, after.t[2]! - before.t[2]!)).toBeCloseTo(2, 9);
    expect((so3Angle(compose(after, inverse(before)).R) * 180) / Math.PI).toBeCloseTo(0.2, 9);

    const result = checkRig(sessionFromSimulation(sim), reference);
    const verdict = Object.fromEntries(result.comparison.cameras.map((c) => [c.name, c.verdict]));
    expect(verdict).toEqual({ left: 'reference', right: 'moved', middle: 'within-tolerance' });
    expect(result.withinTolerance).toBe(false);
    const right = result.comparison.cameras.find((c) => c.name === 'right')!;
    expect(right.shiftNormMm).toBeGreaterThan(1.5);
    expect(right.shiftNormMm).toBeLessThan(2.5);
    expect(right.rotationAngleDeg).toBeGreaterThan(0.17);
    expect(right.rotationAngleDeg).toBeLessThan(0.23);
    expect(right.pValue!).toBeLessThan(1e-6);
    const rms = Object.fromEntries(result.rms.map((r) => [r.name, r]));
    expect(rms.right!.fixedPx).toBeGreaterThan(2 * rms.right!.freshPx);
    // Frame poses are shared, so the other cameras' held RMS rises too, but less: the change table localises the knock.
    expect(rms.right!.fixedPx).toBeGreaterThan(rms.middle!.fixedPx);
    expect(rms.right!.fixedPx).toBeGreaterThan(rms.left!.fixedPx);
  });
});

describe('unchanged rig, fresh data', () => {
  test('passes at the default significance in at least 95 of 100 seeds', () => {
    let passes = 0;
    let notSignificant = 0;
    let cameraTests = 0;
    for (let s = 0; s < 100; s++) {
      // Fresh capture geometry and noise for every seed.
      const fresh = buildRigFile(solveRig(sessionFromSimulation(simulate(desc, { frames: 20, seed: 1000 + s, pixelNoisePx: 0.3 }))));
      const cmp = compareRigFiles(reference, fresh, DEFAULT_TOLERANCES);
      if (cmp.withinTolerance && cmp.cameras.every((c) => c.significant !== true)) passes++;
      for (const c of cmp.cameras) {
        if (c.pValue === null) continue;
        cameraTests++;
        if (c.pValue >= DEFAULT_TOLERANCES.significanceLevel) notSignificant++;
      }
    }
    expect(cameraTests).toBe(200);
    expect(passes).toBeGreaterThanOrEqual(95);
    expect(notSignificant / cameraTests).toBeGreaterThanOrEqual(0.95);
  });
});
