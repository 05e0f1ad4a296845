/**
 * Small valid session/detections/rig fixtures for io and CLI tests, written
 * into fresh folders under os.tmpdir() (never into the repository).
 * Invented data for tests only.
 */
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { InputError } from '../errors.js';
import type { RigFile } from '../io/types.js';

const created: string[] = [];
let cleanupRegistered = false;

/** A fresh empty directory under the system temp folder, removed when the test process exits. */
export function makeTmpDir(prefix = 'rigsolve-io-'): string {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), prefix));
  created.push(dir);
  if (!cleanupRegistered) {
    cleanupRegistered = true;
    process.on('exit', () => {
      for (const d of created) fs.rmSync(d, { recursive: true, force: true });
    });
  }
  return dir;
}

/** A valid session: two cameras (640x480), a 4x3 checkerboard and a 4-point target. */
export const VALID_SESSION = `format: rig-session/1
name: test-rig
reference_camera: cam_a
cameras:
  - name: cam_a
    resolution: [640, 480]
    model: brown-conrady
    focal: [500.0, 500.0]
    center: [319.5, 239.5]
    distortion: [-0.1, 0.01, 0.0, 0.0, 0.0]
    pixel_sigma: 0.5
  - name: cam_b
    resolution: [640, 480]
    model: pinhole
    focal: [450.0, 450.0]
    center: [320.0, 240.0]
targets:
  - name: board
    kind: checkerboard
    inner_corners: [4, 3]
    square: 0.05
  - name: pts
    kind: points
    points: [[0, 0, 0], [0.5, 0, 0], [0, 0.5, 0], [0.5, 0.5, 0.1]]
scene: moving_targets
detections: detections.csv
`;

/** Valid detections for VALID_SESSION (lines 2..7). */
export const VALID_CSV = `frame,camera,target,point,u,v
f0,cam_a,board,0,100.0,200.0
f0,cam_a,board,11,150.5,210.25
f0,cam_b,board,0,300,100
f1,cam_a,pts,3,10,20
f1,cam_b,pts,0,639.5,479.5
f1,cam_b,board,5,-0.5,-0.5
`;

/** Writes session.yaml and detections.csv (unless csv is null) into a new temp dir; returns the session path. */
export function writeSessionFixture(
  session: string | Uint8Array = VALID_SESSION,
  csv: string | Uint8Array | null = VALID_CSV,
  sessionName = 'session.yaml',
): string {
  const dir = makeTmpDir();
  const p = path.join(dir, sessionName);
  fs.writeFileSync(p, session);
  if (csv !== null) fs.writeFileSync(path.join(dir, 'detections.csv'), csv);
  return p;
}

/** A valid rig file object with two cameras. */
export function validRig(): RigFile {
  const zero36 = new Array<number>(36).fill(0);
  const cov = zero36.map((_, k) => (k % 7 === 0 ? 1e-6 * (1 + k / 7) : 0));
  return {
    format: 'rig-calibration/1',
    name: 'test-rig',
    root: 'cam_a',
    cameras: [
      {
        name: 'cam_a',
        parent: null,
        translation: [0, 0, 0],
        quaternion_wxyz: [1, 0, 0, 0],
        rpy_deg: [0, 0, 0],
        sigma_translation_mm: [0, 0, 0],
        sigma_rotation_deg: [0, 0, 0],
        covariance: zero36,
        model: 'brown-conrady',
        resolution: [640, 480],
        focal: [500, 500],
        center: [319.5, 239.5],
        distortion: [-0.1, 0.01, 0, 0, 0],
        rms_px: 0.31,
        detections_used: 1200,
        detections_rejected: 3,
      },
      {
        name: 'cam_b',
        parent: 'cam_a',
        translation: [0.1, -0.02, 0.003],
        quaternion_wxyz: [Math.cos(0.1), 0, Math.sin(0.1), 0],
        rpy_deg: [0, 11.459155902616466, 0],
        sigma_translation_mm: [0.1, 0.2, 0.3],
        sigma_rotation_deg: [0.01, 0.02, 0.03],
        covariance: cov,
        model: 'pinhole',
        resolution: [640, 480],
        focal: [450, 450],
        center: [320, 240],
        distortion: [],
        rms_px: 0.28,
        detections_used: 1100,
        detections_rejected: 0,
      },
    ],
    quality: { rms_px: 0.3, sigma0: 1.02, frames_used: 40, iterations: 9, converged: true },
  };
}

/** Runs fn and returns the InputError it throws (fails when it throws nothing, rethrows anything else). */
export function catchInput(fn: () => unknown): InputError {
  try {
    fn();
  } catch (e) {
    if (e instanceof InputError) return e;
    throw e;
  }
  throw new Error('expected an InputError');
}
