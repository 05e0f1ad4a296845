/**
 * Independent optimiser cross-check on a small rig problem: the general-purpose
 * `ml-levenberg-marquardt` package (npm, finite-difference Jacobians, dense
 * normal equations, plain rotation-vector parameters) must reach the optimum our
 * sparse Schur-complement engine reports, to 1e-6 in relative cost.
 */
import * as nodePath from 'node:path';
import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import { describe, expect, test } from 'vitest';
import { repoRoot } from '../testing/paths.js';
import { cameraModel } from '../camera/registry.js';
import { act, compose, inverse, type Pose } from '../geometry/se3.js';
import { so3Exp, so3Log } from '../geometry/so3.js';
import { lmPresets } from '../solver/index.js';
import { loadRigDescription } from './description-file.js';
import { simulate } from './simulate.js';
import { sessionFromSimulation } from './simulate-session.js';
import { solveRig } from './solve.js';

describe('cross-check against ml-levenberg-marquardt', () => {
  test('stereo rig, 4 frames: same optimum (cost within 1e-6 relative)', () => {
    const desc = loadRigDescription(nodePath.join(repoRoot(), 'rigs', 'stereo-bench.yaml'));
    const sim = simulate(desc, { frames: 4, pixelNoisePx: 0.3, seed: 77, pairFraction: 1 });
    const session = sessionFromSimulation(sim);
    const ours = solveRig(session, { loss: 'none', outlierSigmas: Infinity, lm: lmPresets.precise });
    const d = session.detections;
    const right = session.cameras.findIndex((c) => c.name === 'right');
    const frames = [...new Set(Array.from(d.frame))];
    const model = cameraModel('brown-conrady');
    const target = session.targets[0]!;

    /** Sum of squared pixel errors for T_ref_right and per-frame T_ref_target. */
    const cost = (T_ref_right: Pose, T_ref_target: Map<number, Pose>): number => {
      let s = 0;
      const uv = new Float64Array(2);
      for (let i = 0; i < d.count; i++) {
        const c = d.camera[i]!;
        const T_cam_target = c === right ? compose(inverse(T_ref_right), T_ref_target.get(d.frame[i]!)!) : T_ref_target.get(d.frame[i]!)!;
        const p = act(T_cam_target, target.points.subarray(3 * d.point[i]!, 3 * d.point[i]! + 3));
        model.project(session.cameras[c]!.params, p, uv);
        s += (uv[0]! - d.u[i]!) ** 2 + (uv[1]! - d.v[i]!) ** 2;
      }
      return s;
    };
    const oursFrames = new Map(frames.map((f) => [f, ours.framePoses.get(`${session.frames[f]}\u0000${target.name}`)!]));
    const oursCost = cost(ours.cameras[right]!.T_ref_cam, oursFrames);

    // Parameters: [ω, t] of T_ref_right, then [ω, t] of every T_ref_target; start from a perturbed truth.
    const toVec = (T: Pose) => [...so3Log(T.R), ...T.t];
    const fromVec = (p: number[], o: number): Pose => ({ R: so3Exp(p.slice(o, o + 3)), t: Float64Array.from(p.slice(o + 3, o + 6)) });
    const start = [...toVec(sim.T_ref_cam.get('right')!), ...frames.flatMap((f) => toVec(oursFrames.get(f)!))].map(
      (x, k) => x + (k % 6 < 3 ? 0.002 : 0.003) * Math.cos(7 * k),
    );
    const data = { x: Array.from({ length: 2 * d.count }, (_, k) => k), y: Array.from({ length: 2 * d.count }, (_, k) => (k % 2 ? d.v[k >> 1]! : d.u[k >> 1]!)) };
    let cacheKey = '';
    let cacheVal: Float64Array = new Float64Array(0);
    const predict = (p: number[]): Float64Array => {
      const key = p.join(',');
      if (cacheKey === key) return cacheVal;
      const T_right = fromVec(p, 0);
      const out = new Float64Array(2 * d.count);
      const uv = new Float64Array(2);
      for (let i = 0; i < d.count; i++) {
        const T_target = fromVec(p, 6 + 6 * frames.indexOf(d.frame[i]!));
        const T = d.camera[i] === right ? compose(inverse(T_right), T_target) : T_target;
        const pc = act(T, target.points.subarray(3 * d.point[i]!, 3 * d.point[i]! + 3));
        model.project(session.cameras[d.camera[i]!]!.params, pc, uv);
        out[2 * i] = uv[0]!;
        out[2 * i + 1] = uv[1]!;
      }
      cacheKey = key;
      cacheVal = out;
      return out;
    };
    const fit = levenbergMarquardt(data, (p: number[]) => {
      const values = predict(p);
      return (x: number) => values[x]!;
    }, {
      initialValues: start,
      maxIterations: 60,
      errorTolerance: 1e-12,
      gradientDifference: 1e-7,
      centralDifference: true,
      damping: 1e-3,
    });
    const theirs = fit.parameterValues;
    const theirCost = cost(fromVec(theirs, 0), new Map(frames.map((f, k) => [f, fromVec(theirs, 6 + 6 * k)])));
    expect(Math.abs(theirCost - oursCost) / oursCost).toBeLessThan(1e-6);
  });
});
