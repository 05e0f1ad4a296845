/**
 * Degenerate captures: direct tests of the geometry check, the per-camera
 * findings on simulated sessions, the single-frame-link wording, and the
 * poorly-constrained message from a crafted rank-deficient problem.
 */
import * as nodePath from 'node:path';
import { describe, expect, test } from 'vitest';
import { repoRoot } from '../testing/paths.js';
import { so3Exp } from '../geometry/so3.js';
import type { Pose } from '../geometry/se3.js';
import { Problem, computeCovariance, type ResidualBlock } from '../solver/index.js';
import { loadRigDescription } from './description-file.js';
import { simulate } from './simulate.js';
import { sessionFromSimulation } from './simulate-session.js';
import { solveRig } from './solve.js';
import { RigSolveError } from './errors.js';
import { captureWarnings, diagnoseCapture, intrinsicsGeometryWarning, poorlyConstrainedMessage } from './diagnostics.js';
import { groupViews } from './views.js';

const stereo = () => loadRigDescription(nodePath.join(repoRoot(), 'rigs', 'stereo-bench.yaml'));

/** Board pose: rotated by axis-angle `rot` (rad), its origin at `t` (m) in the camera frame. */
const pose = (rot: number[], t: number[]): Pose => ({ R: so3Exp(rot), t: Float64Array.from(t) });

describe('intrinsicsGeometryWarning', () => {
  test('fronto-parallel views at one distance: names the camera, both problems and what to capture', () => {
    const views = [pose([0.02, 0, 0], [0, 0, 1]), pose([0, 0.03, 0.1], [0.2, 0.1, 1.02]), pose([-0.05, 0.01, 0], [-0.2, 0, 0.98])];
    const w = intrinsicsGeometryWarning('left_eye', views);
    expect(w).toBeDefined();
    expect(w).toContain('camera left_eye');
    expect(w).toContain('nearly fronto-parallel');
    expect(w).toContain('at one distance');
    expect(w).toMatch(/→ capture .*tilted 20–45°.*nearer/);
  });

  test('varied tilts and distances: no warning', () => {
    const views = [pose([0.5, 0, 0], [0, 0, 0.6]), pose([0, -0.6, 0], [0.1, 0, 1.2]), pose([0.3, 0.4, 0], [0, 0.1, 2.0]), pose([0, 0, 0], [0, 0, 0.9])];
    expect(intrinsicsGeometryWarning('cam', views)).toBeUndefined();
  });

  test('tilted but all at one orientation (parallel planes, pure translation between views)', () => {
    const views = [pose([0.6, 0, 0], [0, 0, 0.6]), pose([0.6, 0, 0], [0.3, 0, 1.5]), pose([0.61, 0, 0], [-0.2, 0.1, 2.5])];
    const w = intrinsicsGeometryWarning('cam', views)!;
    expect(w).toContain('one board orientation');
    expect(w).not.toContain('fronto-parallel');
    expect(w).not.toContain('one distance');
  });

  test('fronto-parallel at varied distances: only the tilt problem', () => {
    const views = [pose([0, 0, 0], [0, 0, 0.5]), pose([0, 0, 0.5], [0, 0, 1.5]), pose([0, 0, 1], [0, 0, 3])];
    const w = intrinsicsGeometryWarning('cam', views)!;
    expect(w).toContain('fronto-parallel');
    expect(w).not.toContain('one distance');
  });

  test('distance is measured to the given board centre, not the board origin', () => {
    // Origins at one distance, but centres (0.5 m off the origin along the tilted board) at different ones.
    const views = [pose([0.6, 0, 0], [0, 0, 1]), pose([-0.6, 0, 0], [0, 0, 1]), pose([0, 0.6, 0], [0, 0, 1])];
    expect(intrinsicsGeometryWarning('cam', views)).toContain('one distance');
    expect(intrinsicsGeometryWarning('cam', views, [0, 0.8, 0])).toBeUndefined();
  });

  test('no views: nothing to say (the missing views are reported elsewhere)', () => {
    expect(intrinsicsGeometryWarning('cam', [])).toBeUndefined();
  });
});

describe('diagnoseCapture on simulated sessions', () => {
  test('a camera with fewer than 5 used views gets a warning naming it and how many more to capture', () => {
    const sim = simulate(stereo(), { frames: 40, seed: 4 });
    // Keep every view of left, and only 3 frames of right (all shared with left).
    const shared = [...new Set(sim.views.filter((v) => v.camera === 'right').map((v) => v.frame))].filter((f) =>
      sim.views.some((v) => v.camera === 'left' && v.frame === f),
    );
    const keep = new Set(shared.slice(0, 3));
    sim.detections = sim.detections.filter((d) => d.camera === 'left' || keep.has(d.frame));
    const sol = solveRig(sessionFromSimulation(sim));
    const w = sol.warnings.filter((x) => x.startsWith('camera right: only'));
    expect(w.length, sol.warnings.join('\n')).toBe(1);
    expect(w[0]).toContain('only 3 views used');
    expect(w[0]).toContain('capture at least 2 more frames in which right sees the target');
    expect(sol.warnings.some((x) => x.startsWith('camera left: only'))).toBe(false);
  });

  test('a camera linked to the rest by a single frame: the warning names it, its neighbour and what to capture', () => {
    const sim = simulate(stereo(), { frames: 60, seed: 6 });
    const leftFrames = new Set(sim.views.filter((v) => v.camera === 'left').map((v) => v.frame));
    const shared = sim.views.filter((v) => v.camera === 'right' && leftFrames.has(v.frame)).map((v) => v.frame);
    expect(shared.length).toBeGreaterThan(10);
    // One frame stays shared; of the others, odd ones keep only left's view, even ones only right's.
    const drop = new Map<string, string>();
    shared.slice(1).forEach((f, k) => drop.set(f, k % 2 ? 'right' : 'left'));
    sim.detections = sim.detections.filter((d) => drop.get(d.frame) !== d.camera);
    const sol = solveRig(sessionFromSimulation(sim));
    const w = sol.warnings.find((x) => x.includes('single frame'));
    expect(w, sol.warnings.join('\n')).toBeDefined();
    expect(w).toContain('camera right is linked to the rest of the rig by a single frame (through left)');
    expect(w).toContain('capture more frames in which right and a neighbouring camera see the target at once');
  });

  test('solveIntrinsics cameras are checked for fronto-parallel captures; the others are not', () => {
    const sim = simulate(stereo(), { frames: 25, seed: 9 });
    const session = sessionFromSimulation(sim);
    const views = groupViews(session);
    // Fronto-parallel board poses at one distance for every view.
    views.forEach((v, k) => (v.T_cam_target = { R: so3Exp([0.01 * (k % 3), 0, 0.2]), t: Float64Array.from([0, 0, 1]) }));
    expect(diagnoseCapture(session, views).filter((f) => f.code === 'intrinsics_geometry')).toEqual([]);
    session.cameras[1]!.solveIntrinsics = true;
    const f = diagnoseCapture(session, views).filter((x) => x.code === 'intrinsics_geometry');
    expect(f.map((x) => x.camera)).toEqual(['right']);
    expect(f[0]!.message).toContain('camera right: intrinsics are being solved but all');
  });

  test('a camera whose views were all set aside is an error naming it and the reasons', () => {
    const sim = simulate(stereo(), { frames: 10, seed: 2 });
    const session = sessionFromSimulation(sim);
    const views = groupViews(session);
    for (const v of views) if (session.cameras[v.camera]!.name === 'right') v.status = 'pnp_failed';
    expect(() => captureWarnings(session, views)).toThrow(RigSolveError);
    try {
      captureWarnings(session, views);
    } catch (e) {
      expect((e as RigSolveError).code).toBe('rig.camera_without_views');
      expect((e as Error).message).toMatch(/^camera right has no usable view \(\d+ set aside: \d+ pnp failed\) → capture frames in which right sees/);
    }
  });
});

/** r = A x − b for one 6-vector block labelled "camera NAME", linear, Jacobian A (m x 6). */
function linearBlock(id: number, A: number[][], b: number[]): ResidualBlock {
  return {
    numResiduals: A.length,
    parameterBlocks: [id],
    innerSize: 6,
    mapped: false,
    evaluate(params, r, J) {
      const x = params[0]!;
      A.forEach((row, i) => {
        r[i] = row.reduce((s, a, k) => s + a * x[k]!, 0) - b[i]!;
        if (J) for (let k = 0; k < 6; k++) J[i * 6 + k] = row[k]!;
      });
      return true;
    },
  };
}

describe('poorlyConstrainedMessage', () => {
  test('a camera whose z translation is indistinguishable from its y translation: named, with the directions and what to capture', () => {
    const problem = new Problem();
    const ref = problem.addParameterBlock({ values: new Float64Array(6), constant: true, label: 'camera left' });
    const id = problem.addParameterBlock({ values: new Float64Array(6), label: 'camera right' });
    expect(ref).toBe(0);
    // Columns 4 (ty) and 5 (tz) are identical: a one-dimensional null space along ty − tz.
    const A = [
      [1, 0, 0, 0, 0, 0],
      [0, 1, 0, 0, 0, 0],
      [0, 0, 1, 0, 0, 0],
      [0, 0, 0, 1, 0, 0],
      [0, 0, 0, 0, 1, 1],
      [0.5, 0.2, 0, 0.1, 2, 2],
      [0, 0.3, 0.1, 0, -1, -1],
    ];
    problem.addResidualBlock(linearBlock(id, A, A.map((_, i) => 0.01 * i)));
    const res = computeCovariance(problem);
    expect(res.ok).toBe(false);
    if (res.ok) return;
    const sim = simulate(stereo(), { frames: 6, seed: 1 });
    const session = sessionFromSimulation(sim);
    const views = groupViews(session);
    const msg = poorlyConstrainedMessage(res, session, views);
    const rightViews = views.filter((v) => v.camera === 1).length;
    expect(msg).toContain(`camera right (translation along y, translation along z; ${rightViews} views used)`);
    expect(msg).toMatch(/^the rig is poorly constrained \(rank deficient/);
    expect(msg).toContain('→ capture more frames in which right and a camera linked to the reference see the whole target at once');
    expect(msg).not.toContain('\n');
  });

  test('frame blocks are named when no camera stands out', () => {
    const session = sessionFromSimulation(simulate(stereo(), { frames: 4, seed: 1 }));
    const msg = poorlyConstrainedMessage(
      {
        ok: false,
        reason: 'eliminated_block_singular',
        message: '',
        poorlyConstrained: [{ blockId: 3, label: 'frame f00002 target board', tangentIndices: [2] }],
        reciprocalCondition: NaN,
        nullSpaceDimension: 0,
        sigma0Squared: 1,
        numResiduals: 10,
        numFreeParameters: 6,
      },
      session,
      [],
    );
    expect(msg).toContain('frame f00002 target board (rotation about z)');
    expect(msg).toContain('nearly collinear');
  });
});
