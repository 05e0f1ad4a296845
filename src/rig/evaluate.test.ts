/**
 * evaluateRig against synthetic ground truth: at the true extrinsics the
 * residuals match the simulated pixel noise (sigma0 ≈ 1); a rig with one
 * camera moved by 20 mm explains the session visibly worse; mismatched
 * cameras are input errors.
 */
import { describe, expect, test } from 'vitest';
import { InputError } from '../errors.js';
import { matrixToQuat } from '../geometry/rotation.js';
import { solvedFixture } from '../testing/report-fixtures.js';
import { evaluateRig } from './evaluate.js';
import type { RigFile } from '../io/types.js';

const fx = solvedFixture('stereo-bench.yaml', { frames: 30 });

/** The rig file with each camera's pose replaced by the simulation's truth. */
function truthRig(): RigFile {
  return {
    ...fx.rig,
    cameras: fx.rig.cameras.map((c) => {
      const T = fx.sim.T_ref_cam.get(c.name)!;
      const q = matrixToQuat(T.R);
      return { ...c, translation: [T.t[0]!, T.t[1]!, T.t[2]!], quaternion_wxyz: [q[0]!, q[1]!, q[2]!, q[3]!] };
    }),
  };
}

describe('evaluateRig (extrinsics held fixed, per-frame target poses)', () => {
  test('at the true extrinsics: sigma0 ≈ 1 and RMS ≈ √2 × the simulated 0.3 px noise', () => {
    const ev = evaluateRig(fx.solution.session, truthRig());
    // Simulated noise is 0.3 px per axis and the session's pixel_sigma says the same, so sigma0 should be about 1.
    expect(ev.sigma0).toBeGreaterThan(0.9);
    expect(ev.sigma0).toBeLessThan(1.1);
    // Expected RMS of the 2-D error norm for σ = 0.3 px per axis: 0.3·√2 ≈ 0.424 px (minus the few fitted dof).
    expect(ev.rmsPx).toBeGreaterThan(0.38);
    expect(ev.rmsPx).toBeLessThan(0.46);
    expect(ev.converged).toBe(true);
    expect(ev.cameras.map((c) => c.T_ref_cam.t[0])).toEqual(truthRig().cameras.map((c) => c.translation[0]));
  });

  test('the solved rig explains its own session as well as the solve said', () => {
    const ev = evaluateRig(fx.solution.session, fx.rig);
    expect(Math.abs(ev.rmsPx - fx.solution.rmsPx)).toBeLessThan(0.01);
    expect(Array.from(ev.cameras[1]!.covariance)).toEqual(fx.rig.cameras[1]!.covariance);
  });

  test('a camera moved by 20 mm raises its RMS several-fold', () => {
    const moved = truthRig();
    moved.cameras[1] = { ...moved.cameras[1]!, translation: [moved.cameras[1]!.translation[0] + 0.02, moved.cameras[1]!.translation[1], moved.cameras[1]!.translation[2]] };
    const ev = evaluateRig(fx.solution.session, moved);
    expect(ev.rmsPx).toBeGreaterThan(3 * fx.solution.rmsPx);
  });

  test('a session camera missing from the rig, or another resolution, is an InputError naming both', () => {
    const missing = { ...fx.rig, cameras: fx.rig.cameras.filter((c) => c.name !== 'right') };
    expect(() => evaluateRig(fx.solution.session, missing, 'rig.yaml')).toThrow(InputError);
    expect(() => evaluateRig(fx.solution.session, missing, 'rig.yaml')).toThrow(/camera "right" of the session is not in the rig file/);
    const res = { ...fx.rig, cameras: fx.rig.cameras.map((c) => ({ ...c, resolution: [640, 400] as [number, number] })) };
    expect(() => evaluateRig(fx.solution.session, res, 'rig.yaml')).toThrow(/resolution 640x400 in the rig file but 1280x800 in the session/);
  });
});
