/**
 * Renders example photos of a checkerboard for a rig of cameras: one image
 * per (camera, frame), written as PNG or JPEG, with the exact projected
 * corners returned as ground truth. Used to build example data sets from a
 * simulated rig; the rendering model is render-board.ts
 * (Brown–Conrady or pinhole cameras, supersampled anti-aliasing, optional
 * blur, noise, gamma and uneven lighting).
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { compose, inverse, type Pose } from '../geometry/se3.js';
import { renderBoard, type RenderCamera, type RenderOptions } from './render-board.js';
import { encodeJpeg, encodePng } from '../detect/image.js';

export interface ExampleCamera {
  /** Camera name (used in file names). */
  name: string;
  /** Image size, intrinsics and Brown–Conrady distortion [k1 k2 p1 p2 k3]. */
  camera: RenderCamera;
  /** Pose of the camera in the rig: maps camera points to rig points. */
  T_rig_cam: Pose;
}

export interface ExampleFrame {
  /** Capture id (used in file names). */
  frame: string;
  /** Pose of the board in the rig frame at this capture. */
  T_rig_board: Pose;
}

export interface ExamplePhotosSpec {
  cameras: readonly ExampleCamera[];
  frames: readonly ExampleFrame[];
  board: { columns: number; rows: number; squareM: number; borderM?: number };
  /** Output folder; created if missing. */
  outDir: string;
  /** File path relative to outDir (default `${camera}/${frame}.png`); the extension picks PNG or JPEG. */
  fileName?: (camera: string, frame: string) => string;
  /** Imaging options (default: blur 0.7 px, noise 2/255); `seed` is varied per image. */
  render?: RenderOptions;
  /** JPEG quality when writing .jpg/.jpeg (default 92). */
  jpegQuality?: number;
  /** Only write images in which the whole checkered area is visible (default true). */
  onlyFullyVisible?: boolean;
}

export interface ExamplePhoto {
  camera: string;
  frame: string;
  /** Absolute path of the written file. */
  file: string;
  /** Ground-truth (u, v) per point id (id = row·columns + column). */
  cornersPx: Float64Array;
  boardInside: boolean;
}

/** Renders and writes the photos; returns one entry per written file. */
export function renderExamplePhotos(spec: ExamplePhotosSpec): ExamplePhoto[] {
  const fileName = spec.fileName ?? ((camera: string, frame: string) => `${camera}/${frame}.png`);
  const opts: RenderOptions = { blurSigmaPx: 0.7, noiseSigma: 2 / 255, ...spec.render };
  const onlyVisible = spec.onlyFullyVisible ?? true;
  const out: ExamplePhoto[] = [];
  let seed = opts.seed ?? 1;
  for (const cam of spec.cameras) {
    const T_cam_rig = inverse(cam.T_rig_cam);
    for (const f of spec.frames) {
      const T_cam_board = compose(T_cam_rig, f.T_rig_board);
      const r = renderBoard(cam.camera, spec.board, T_cam_board, { ...opts, seed: seed++ });
      if (onlyVisible && !r.boardInside) continue;
      const file = path.resolve(spec.outDir, fileName(cam.name, f.frame));
      mkdirSync(path.dirname(file), { recursive: true });
      const ext = path.extname(file).toLowerCase();
      writeFileSync(file, ext === '.jpg' || ext === '.jpeg' ? encodeJpeg(r.image, spec.jpegQuality ?? 92) : encodePng(r.image));
      out.push({ camera: cam.name, frame: f.frame, file, cornersPx: r.cornersPx, boardInside: r.boardInside });
    }
  }
  return out;
}
