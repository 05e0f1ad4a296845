/**
 * "Is this rig still calibrated?": a new session checked against a rig file.
 *
 *  a. Reference extrinsics held fixed (only frame poses free): per-camera
 *     reprojection RMS on the new data, beside the reference's own rms_px
 *     and the fresh solve's RMS on the same new data.
 *  b. A fresh solve of the new session, and per camera the change from the
 *     reference with its significance (see compare.ts).
 *  c. A verdict per camera and overall against the tolerances.
 *
 * The rig file is only read.
 */
import { InputError, type InputIssue } from '../errors.js';
import type { Pose } from '../geometry/se3.js';
import type { RigFile, Session } from '../io/types.js';
import { buildRigFile } from './output.js';
import { compareRigFiles, DEFAULT_TOLERANCES, rigCameraPose, verdictFails, type RigComparison, type Tolerances } from './compare.js';
import { solveRig, type RigSolution, type RigSolveOptions } from './solve.js';

export interface CameraRms {
  name: string;
  /** rms_px stored in the reference rig file (its own calibration data), px. */
  referencePx: number;
  /** RMS on the new data with the reference extrinsics held fixed, px (NaN without data). */
  fixedPx: number;
  /** RMS on the new data after the fresh solve, px. */
  freshPx: number;
  /** Detections used with the reference extrinsics held fixed. */
  fixedDetectionsUsed: number;
}

export interface RigCheck {
  comparison: RigComparison;
  rms: CameraRms[];
  /** The fresh solve as a rig file (not written anywhere by check). */
  fresh: RigFile;
  freshSolution: RigSolution;
  fixedSolution: RigSolution;
  /** Issues worth reading that do not change the verdict (e.g. differing intrinsics). */
  notes: string[];
  withinTolerance: boolean;
}

const INTRINSICS_REL_TOL = 1e-9;

/** Input problems between a session and a rig file: root and camera names. */
function checkCompatible(session: Session, rig: RigFile, rigPath: string): void {
  const issues: InputIssue[] = [];
  if (session.referenceCamera !== rig.root) {
    issues.push({
      file: session.path,
      path: 'reference_camera',
      message: `reference camera "${session.referenceCamera}" differs from the root "${rig.root}" of ${rigPath}`,
      hint: `set reference_camera: ${rig.root}`,
    });
  }
  const rigNames = new Set(rig.cameras.map((c) => c.name));
  for (const c of session.cameras) {
    if (!rigNames.has(c.name)) {
      issues.push({ file: session.path, path: 'cameras', message: `camera "${c.name}" is not in ${rigPath}`, hint: 'check against the rig file that calibrated this camera, or remove it from the session' });
    }
  }
  if (issues.length) throw new InputError('check.incompatible', issues);
}

/** Runs the check. Throws InputError when the session and rig file do not belong together. */
export function checkRig(session: Session, rig: RigFile, opts: { tolerances?: Tolerances; rigPath?: string; solve?: Partial<RigSolveOptions> } = {}): RigCheck {
  const tol = opts.tolerances ?? DEFAULT_TOLERANCES;
  const rigPath = opts.rigPath ?? 'the rig file';
  checkCompatible(session, rig, rigPath);
  const notes: string[] = [];
  const fixedPoses = new Map<string, Pose>();
  for (const c of rig.cameras) fixedPoses.set(c.name, rigCameraPose(c));
  for (const sc of session.cameras) {
    const rc = rig.cameras.find((c) => c.name === sc.name)!;
    const rigParams = [...rc.focal, ...rc.center, ...rc.distortion];
    const differs =
      rc.model !== sc.model ||
      rigParams.length !== sc.params.length ||
      rigParams.some((v, i) => Math.abs(v - sc.params[i]!) > INTRINSICS_REL_TOL * Math.max(1, Math.abs(v)));
    if (differs) notes.push(`camera ${sc.name}: the session's intrinsics differ from those in ${rigPath}; the check uses the session's`);
  }

  const fixedSolution = solveRig(session, { ...opts.solve, fixedExtrinsics: fixedPoses });
  const freshSolution = solveRig(session, opts.solve);
  const fresh = buildRigFile(freshSolution);
  const comparison = compareRigFiles(rig, fresh, tol);
  const rms: CameraRms[] = rig.cameras.map((rc) => {
    const fx = fixedSolution.cameras.find((c) => c.name === rc.name);
    const fr = freshSolution.cameras.find((c) => c.name === rc.name);
    return {
      name: rc.name,
      referencePx: rc.rms_px,
      fixedPx: fx ? fx.rmsPx : NaN,
      freshPx: fr ? fr.rmsPx : NaN,
      fixedDetectionsUsed: fx ? fx.detectionsUsed : 0,
    };
  });
  for (const r of rms) {
    if (r.fixedPx > 2 * Math.max(r.freshPx, r.referencePx)) {
      notes.push(`camera ${r.name}: with the reference extrinsics its RMS is ${(r.fixedPx / Math.max(r.freshPx, r.referencePx)).toFixed(1)}x what a fresh solve reaches on the same data`);
    }
  }
  notes.push(...freshSolution.warnings);
  return {
    comparison,
    rms,
    fresh,
    freshSolution,
    fixedSolution,
    notes,
    withinTolerance: !comparison.cameras.some((c) => verdictFails(c.verdict)),
  };
}
