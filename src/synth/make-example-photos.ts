/**
 * Renders an example photo set from a rig description (format:
 * rig-description/1, e.g. rigs/farm-rover.yaml): one grey JPEG per camera and
 * frame, board placements from photo-plan.ts (mostly co-visible by two
 * neighbouring cameras), uneven lighting, blur, gamma and noise. Every camera
 * photographs every frame, so some photos show the board only in part or not
 * at all, as in a real capture.
 *
 *   node dist/synth/make-example-photos.js rigs/farm-rover.yaml --out examples/farm-rover-photos [--frames 12] [--quality 90] [--force]
 *
 * Writes into --out:
 *   photos/{camera}/{frame}.jpg
 *   session.yaml          detections: detections.csv (written by `rigsolve detect`)
 *   session-photos.yaml   detections: photos/{camera}/{frame}.jpg (`rigsolve solve` detects first)
 *   truth.yaml            the true rig (rig-calibration/1, zero covariance)
 *   corners-truth.csv     exact corner projections in the photos where every inner corner is in view (detections columns)
 */
import * as fs from 'node:fs';
import * as nodePath from 'node:path';
import { pathToFileURL } from 'node:url';
import { Command, InvalidArgumentError } from 'commander';
import { loadRigDescription } from '../rig/description-file.js';
import { truthRig } from '../rig/simulate-files.js';
import { rigFileToYaml, toCompactYaml } from '../io/rig-file.js';
import { compose, inverse, type Pose } from '../geometry/se3.js';
import { encodeJpeg } from '../detect/image.js';
import { rng, uniform } from '../util/random.js';
import type { RigDescription } from '../rig/description.js';
import { planBoardPoses, plannedCameras } from './photo-plan.js';
import { renderBoard } from './render-board.js';

/**
 * Detection noise stated in the example sessions, px: about the corner RMS
 * the detector reaches on rendered photos with mild blur and noise (measured
 * by src/bench/detect-bench.ts), not the simulator's pixel_sigma.
 */
export const EXAMPLE_PIXEL_SIGMA_PX = 0.05;

export interface ExampleSetOptions {
  outDir: string;
  frames?: number;
  jpegQuality?: number;
  force?: boolean;
  /** Called after each image. */
  onImage?: (file: string, boardInside: boolean) => void;
}

export interface ExampleSetResult {
  files: string[];
  images: number;
  /** Images in which the whole board is in view. */
  fullyVisible: number;
  bytes: number;
}

/** Renders and writes the example set; returns the files written. */
export function makeExamplePhotos(desc: RigDescription, opts: ExampleSetOptions): ExampleSetResult {
  const board = desc.targets[0]?.spec;
  if (!board || board.kind !== 'checkerboard') throw new Error(`${desc.path}: the first target must be a checkerboard`);
  const renderBoardSpec = { columns: board.innerCorners![0], rows: board.innerCorners![1], squareM: board.square! };
  const cap = desc.capture;
  const plan = planBoardPoses(plannedCameras(desc), renderBoardSpec, {
    frames: opts.frames ?? cap?.frames ?? 12,
    distanceM: cap?.distanceM ?? [1.2, 2.0],
    tiltDeg: cap?.tiltDeg ?? 30,
    seed: cap?.seed ?? 1,
  });
  const cams = plannedCameras(desc);
  const out = opts.outDir;
  const sessionFile = nodePath.join(out, 'session.yaml');
  if (!opts.force && fs.existsSync(sessionFile)) throw new Error(`${sessionFile} exists; pass --force to overwrite the example set`);
  fs.rmSync(nodePath.join(out, 'photos'), { recursive: true, force: true });
  const files: string[] = [];
  let bytes = 0;
  let fullyVisible = 0;
  const truthRows = ['frame,camera,target,point,u,v'];
  const light = rng((cap?.seed ?? 1) + 1000);
  let seed = 1;
  for (const f of plan) {
    // One lighting per frame (sun and cloud), shared by the cameras.
    const lighting = { a: uniform(light, -0.35, 0.35), b: uniform(light, -0.3, 0.3), c: -0.25 };
    for (const c of cams) {
      const T_cam_board: Pose = compose(inverse(c.T_ref_cam), f.T_ref_board);
      const r = renderBoard(c.camera, renderBoardSpec, T_cam_board, { blurSigmaPx: 0.8, noiseSigma: 2 / 255, gamma: 2.2, lighting, seed: seed++ });
      const file = nodePath.join(out, 'photos', c.name, `${f.frame}.jpg`);
      fs.mkdirSync(nodePath.dirname(file), { recursive: true });
      const jpg = encodeJpeg(r.image, opts.jpegQuality ?? 90);
      fs.writeFileSync(file, jpg);
      bytes += jpg.length;
      files.push(file);
      if (r.boardInside) fullyVisible++;
      if (r.allCornersInside) {
        const n = r.cornersPx.length / 2;
        for (let i = 0; i < n; i++) truthRows.push(`${f.frame},${c.name},${board.name},${i},${r.cornersPx[2 * i]!.toFixed(4)},${r.cornersPx[2 * i + 1]!.toFixed(4)}`);
      }
      opts.onImage?.(file, r.boardInside);
    }
  }
  const header = (what: string) =>
    `# Example session made by src/synth/make-example-photos.ts from ${nodePath.basename(desc.path)}: ${what}\n# Invented scenario; true poses in truth.yaml.\n`;
  const session = (detections: string) => ({
    format: 'rig-session/1',
    name: desc.name,
    reference_camera: desc.referenceCamera,
    cameras: desc.cameras.map((c) => ({
      name: c.spec.name,
      resolution: c.spec.resolution,
      model: c.spec.model,
      focal: [c.spec.params[0], c.spec.params[1]],
      center: [c.spec.params[2], c.spec.params[3]],
      distortion: Array.from(c.spec.params.subarray(4)),
      solve_intrinsics: false,
      pixel_sigma: EXAMPLE_PIXEL_SIGMA_PX,
    })),
    targets: [{ name: board.name, kind: 'checkerboard', inner_corners: board.innerCorners, square: board.square }],
    scene: 'moving_targets',
    detections,
  });
  const write = (name: string, text: string) => {
    const p = nodePath.join(out, name);
    fs.writeFileSync(p, text);
    files.push(p);
  };
  write('session.yaml', header('detections come from `rigsolve detect` (detections.csv).') + toCompactYaml(session('detections.csv')));
  write('session-photos.yaml', header('detections: is an image pattern, so `rigsolve solve` detects first.') + toCompactYaml(session('photos/{camera}/{frame}.jpg')));
  const T_ref_cam = new Map(cams.map((c) => [c.name, c.T_ref_cam]));
  write('truth.yaml', rigFileToYaml(truthRig({ description: desc, T_ref_cam })));
  write('corners-truth.csv', truthRows.join('\n') + '\n');
  return { files, images: plan.length * cams.length, fullyVisible, bytes };
}

function positiveInt(v: string): number {
  const n = Number(v);
  if (!Number.isInteger(n) || n < 1) throw new InvalidArgumentError(`expected a positive integer, got "${v}"`);
  return n;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const program = new Command()
    .name('make-example-photos')
    .description('Render an example photo set (JPEG) with session, truth and corner ground truth from a rig description.')
    .argument('<rig-description>', 'rig description file, e.g. rigs/farm-rover.yaml')
    .requiredOption('--out <dir>', 'output folder')
    .option('--frames <n>', 'number of frames (default: the capture plan)', positiveInt)
    .option('--quality <q>', 'JPEG quality 1..100', positiveInt, 90)
    .option('--force', 'overwrite an existing example set')
    .action((file: string, o: { out: string; frames?: number; quality: number; force?: boolean }) => {
      const desc = loadRigDescription(file);
      const r = makeExamplePhotos(desc, { outDir: o.out, jpegQuality: o.quality, force: Boolean(o.force), ...(o.frames ? { frames: o.frames } : {}) });
      console.log(`${r.images} photos (${r.fullyVisible} with the whole board in view), ${(r.bytes / 1e6).toFixed(2)} MB of JPEG, in ${o.out}`);
    });
  program.parse();
}
