/**
 * Writes a simulation as files: session.yaml (rig-session/1),
 * detections.csv and truth.yaml (rig-calibration/1 with the true poses and
 * zero covariance, so `rigsolve compare truth.yaml rig.yaml` measures the
 * error of a solve).
 */
import * as fs from 'node:fs';
import * as nodePath from 'node:path';
import { matrixToQuat, matrixToRpy } from '../geometry/rotation.js';
import { writeFileAtomic } from '../io/atomic.js';
import { rigFileToYaml, toCompactYaml } from '../io/rig-file.js';
import { OptionsError } from '../errors.js';
import type { RigCamera, RigFile, TargetSpec } from '../io/types.js';
import type { Simulation } from './simulate.js';
import { poseEntry } from './output.js';

const DEG = 180 / Math.PI;

function targetEntry(t: TargetSpec): Record<string, unknown> {
  if (t.kind === 'checkerboard') return { name: t.name, kind: 'checkerboard', inner_corners: t.innerCorners, square: t.square };
  const points: number[][] = [];
  for (let i = 0; i < t.numPoints; i++) points.push([t.points[3 * i]!, t.points[3 * i + 1]!, t.points[3 * i + 2]!]);
  return { name: t.name, kind: 'points', points };
}

export function sessionObject(sim: Simulation): Record<string, unknown> {
  const d = sim.description;
  return {
    format: 'rig-session/1',
    name: d.name,
    reference_camera: d.referenceCamera,
    cameras: d.cameras.map((c) => {
      const s = c.spec;
      const nd = s.params.length - 4;
      // A camera whose intrinsics are to be estimated from scratch (intrinsicsGiven false) is written without them.
      const intr = s.intrinsicsGiven
        ? { focal: [s.params[0], s.params[1]], center: [s.params[2], s.params[3]], distortion: Array.from(s.params.subarray(4, 4 + nd)) }
        : {};
      return {
        name: s.name,
        resolution: s.resolution,
        model: s.model,
        ...intr,
        solve_intrinsics: s.solveIntrinsics,
        ...(s.fixedIntrinsics.length > 0 && s.solveIntrinsics ? { fixed_intrinsics: s.fixedIntrinsics } : {}),
        pixel_sigma: sim.plan.pixelNoisePx > 0 ? sim.plan.pixelNoisePx : s.pixelSigma,
      };
    }),
    targets: d.targets.map((t) => targetEntry(t.spec)),
    scene: d.scene,
    detections: 'detections.csv',
  };
}

export function detectionsCsv(sim: Simulation): string {
  const lines = ['frame,camera,target,point,u,v'];
  for (const r of sim.detections) lines.push(`${r.frame},${r.camera},${r.target},${r.point},${r.u.toFixed(4)},${r.v.toFixed(4)}`);
  return lines.join('\n') + '\n';
}

/** The true rig as a rig file (zero covariance). */
export function truthRig(sim: Pick<Simulation, 'description' | 'T_ref_cam'> & Partial<Pick<Simulation, 'T_origin_target'>>): RigFile {
  const d = sim.description;
  const cameras: RigCamera[] = d.cameras.map((c) => {
    const T = sim.T_ref_cam.get(c.spec.name)!;
    const q = matrixToQuat(T.R);
    const rpy = matrixToRpy(T.R);
    const s = c.spec;
    return {
      name: s.name,
      parent: s.name === d.referenceCamera ? null : d.referenceCamera,
      translation: [T.t[0]!, T.t[1]!, T.t[2]!],
      quaternion_wxyz: [q[0]!, q[1]!, q[2]!, q[3]!],
      rpy_deg: [rpy[0]! * DEG, rpy[1]! * DEG, rpy[2]! * DEG],
      sigma_translation_mm: [0, 0, 0],
      sigma_rotation_deg: [0, 0, 0],
      covariance: new Array(36).fill(0),
      model: s.model,
      resolution: [...s.resolution],
      focal: [s.params[0]!, s.params[1]!],
      center: [s.params[2]!, s.params[3]!],
      distortion: Array.from(s.params.subarray(4)),
      rms_px: 0,
      detections_used: 0,
      detections_rejected: 0,
    };
  });
  const targets =
    d.scene === 'fixed_targets'
      ? d.targets.map((t, i) => poseEntry(t.spec.name, i === 0 ? null : d.targets[0]!.spec.name, sim.T_origin_target!.get(t.spec.name)!, new Array(36).fill(0)))
      : [];
  return {
    format: 'rig-calibration/1',
    name: `${d.name} (ground truth)`,
    root: d.referenceCamera,
    cameras,
    ...(targets.length > 0 ? { targets } : {}),
    quality: { rms_px: 0, sigma0: 0, frames_used: 0, iterations: 0, converged: true },
  };
}

/** Writes session.yaml, detections.csv and truth.yaml into dir (created if needed). */
export function writeSimulation(dir: string, sim: Simulation, opts: { force?: boolean } = {}): string[] {
  fs.mkdirSync(dir, { recursive: true });
  const files = ['session.yaml', 'detections.csv', 'truth.yaml'].map((f) => nodePath.join(dir, f));
  if (!opts.force) {
    const existing = files.filter((f) => fs.existsSync(f));
    if (existing.length > 0) {
      throw new OptionsError('output.exists', `${existing.join(', ')} already exist${existing.length === 1 ? 's' : ''}: pass --force to overwrite, or choose another --out folder`);
    }
  }
  const header = `# Synthetic session made by rigsolve simulate from ${nodePath.basename(sim.description.path)} (seed ${sim.plan.seed}).\n`;
  writeFileAtomic(files[1]!, detectionsCsv(sim), { force: true });
  writeFileAtomic(files[0]!, header + toCompactYaml(sessionObject(sim)), { force: true });
  writeFileAtomic(files[2]!, rigFileToYaml(truthRig(sim)), { force: true });
  return files;
}
