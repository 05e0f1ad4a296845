/**
 * In-memory forms of the files in formats.md. Loaders in io/ produce these;
 * rig/, report/ and cli/ consume them. Lengths in metres, angles in radians.
 */
import type { CameraModelName } from '../camera/model.js';

export interface CameraSpec {
  name: string;
  /** [width, height] in px. */
  resolution: [number, number];
  model: CameraModelName;
  /** fx fy cx cy then the model's distortion coefficients (formats.md order). */
  params: Float64Array;
  /** False when focal/center/distortion were omitted and must be initialised from data. */
  intrinsicsGiven: boolean;
  /** Refine focal/center/distortion jointly. */
  solveIntrinsics: boolean;
  /** Names of intrinsic parameters held fixed when solving intrinsics (e.g. ['k3','p1','p2']). */
  fixedIntrinsics: string[];
  /** Prior detection noise, px, 1-sigma per image axis (default 1). */
  pixelSigma: number;
}

export type TargetKind = 'checkerboard' | 'points';

export interface TargetSpec {
  name: string;
  kind: TargetKind;
  /** Point coordinates in the target frame, metres, xyz interleaved; point id = index. */
  points: Float64Array;
  numPoints: number;
  /** Checkerboard only: [columns, rows] of inner corners. */
  innerCorners?: [number, number];
  /** Checkerboard only: square size, m. */
  square?: number;
}

export type SceneMode = 'moving_targets' | 'fixed_targets';

/**
 * Detections, column-oriented. Row i is one detected point. Frames,
 * cameras and targets are indices into Session.frames / cameras / targets.
 */
export interface DetectionTable {
  count: number;
  frame: Int32Array;
  camera: Int32Array;
  target: Int32Array;
  point: Int32Array;
  u: Float64Array;
  v: Float64Array;
  /** Per-detection sigma in px, or NaN when the camera's pixel_sigma applies. */
  sigma: Float64Array;
  /** 1-based line in the CSV file (for messages). */
  line: Int32Array;
}

export interface Session {
  format: string;
  name: string;
  /** Absolute path of the session file (for messages and relative paths). */
  path: string;
  referenceCamera: string;
  cameras: CameraSpec[];
  targets: TargetSpec[];
  scene: SceneMode;
  /** Path of the detections CSV as resolved against the session file (the pattern itself when `detections:` is an image pattern). */
  detectionsPath: string;
  /**
   * Set when `detections:` is an image pattern (contains `{camera}`): the pattern
   * resolved against the session file's folder. The detections are then found
   * in the images by the caller (see detect/session-detect.ts).
   */
  detectionsPattern?: string;
  /** Distinct frame ids, in order of first appearance. */
  frames: string[];
  detections: DetectionTable;
}

/** One camera entry of a rig file (formats.md, rig-calibration/1). */
export interface RigCamera {
  name: string;
  parent: string | null;
  translation: [number, number, number];
  quaternion_wxyz: [number, number, number, number];
  rpy_deg: [number, number, number];
  sigma_translation_mm: [number, number, number];
  sigma_rotation_deg: [number, number, number];
  /** 36 numbers, row-major, order rx ry rz tx ty tz. */
  covariance: number[];
  model: CameraModelName;
  resolution: [number, number];
  focal: [number, number];
  center: [number, number];
  distortion: number[];
  rms_px: number;
  detections_used: number;
  detections_rejected: number;
  /** Extra fields the tool may add (e.g. intrinsics_sigma). */
  [extra: string]: unknown;
}

export interface RigQuality {
  rms_px: number;
  sigma0: number;
  frames_used: number;
  iterations: number;
  converged: boolean;
  [extra: string]: unknown;
}

export interface RigFile {
  format: string;
  name: string;
  root: string;
  cameras: RigCamera[];
  quality: RigQuality;
  [extra: string]: unknown;
}
