import * as fs from 'node:fs';
import * as path from 'node:path';
import { beforeAll, describe, expect, test } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { run } from './main.js';
import { so3Exp, so3Log } from '../geometry/so3.js';
import { compose, inverse, type Pose } from '../geometry/se3.js';
import { mat3Mul } from '../linalg/small.js';
import { renderExamplePhotos, type ExamplePhoto } from '../synth/render-examples.js';
import { encodePng } from '../detect/image.js';
import { makeTmpDir } from '../testing/io-fixtures.js';

/**
 * A tiny invented stereo pair (640x400, mild Brown–Conrady distortion) and a
 * 6x5 board (columns + rows odd: no 180° ambiguity), photographed 6 times in
 * the overlap. Ground truth: the renderer's exact corner projections.
 */
const CAM = { width: 640, height: 400, fx: 430, fy: 430, cx: 319.5, cy: 199.5, distortion: [-0.12, 0.02, 0, 0, 0] };
const T_rig_b: Pose = { R: so3Exp([0.01, -0.06, 0.015]), t: Float64Array.from([0.16, 0.004, -0.01]) };
const BOARD = { columns: 6, rows: 5, squareM: 0.05 };

function sessionYaml(detections: string): string {
  const cam = (name: string) => `  - name: ${name}
    resolution: [640, 400]
    model: brown-conrady
    focal: [430, 430]
    center: [319.5, 199.5]
    distortion: [-0.12, 0.02, 0, 0, 0]
    pixel_sigma: 0.2
`;
  return `format: rig-session/1
name: tiny-pair
reference_camera: cam_a
cameras:
${cam('cam_a')}${cam('cam_b')}targets:
  - name: board
    kind: checkerboard
    inner_corners: [6, 5]
    square: 0.05
scene: moving_targets
detections: ${detections}
`;
}

async function cli(argv: string[], opts: { tty?: boolean } = {}) {
  let out = '';
  let err = '';
  const code = await run(argv, { stdout: (t) => (out += t), stderr: (t) => (err += t), stderrIsTTY: opts.tty ?? false });
  return { code, out, err };
}

let dir = '';
let photos: ExamplePhoto[] = [];

beforeAll(() => {
  dir = makeTmpDir('rigsolve-detect-');
  const frames = [];
  const centres = [
    [0.08, -0.03, 0.85, 0.25, 0.1],
    [0.02, 0.02, 0.95, -0.2, 0.25],
    [0.12, 0.0, 0.8, 0.1, -0.3],
    [0.06, 0.04, 1.0, -0.3, -0.15],
    [0.1, -0.02, 0.9, 0.3, 0.3],
    [0.04, 0.01, 0.88, 0.0, -0.35],
  ];
  for (let k = 0; k < centres.length; k++) {
    const [x, y, z, ax, ay] = centres[k]!;
    const R = mat3Mul(new Float64Array(9), so3Exp([ax!, ay!, 0]), so3Exp([0, 0, 0.1 * (k - 2)]));
    const bc = [((BOARD.columns - 1) * BOARD.squareM) / 2, ((BOARD.rows - 1) * BOARD.squareM) / 2];
    const t = Float64Array.from([0, 1, 2].map((i) => [x!, y!, z!][i]! - (R[3 * i]! * bc[0]! + R[3 * i + 1]! * bc[1]!)));
    frames.push({ frame: `f${k + 1}`, T_rig_board: { R, t } });
  }
  photos = renderExamplePhotos({
    cameras: [
      { name: 'cam_a', camera: CAM, T_rig_cam: { R: so3Exp([0, 0, 0]), t: new Float64Array(3) } },
      { name: 'cam_b', camera: CAM, T_rig_cam: T_rig_b },
    ],
    frames,
    board: BOARD,
    outDir: path.join(dir, 'photos'),
    render: { supersample: 8, blurSigmaPx: 0.6, noiseSigma: 1.5 / 255 },
  });
  fs.writeFileSync(path.join(dir, 'session.yaml'), sessionYaml('detections.csv'));
  fs.writeFileSync(path.join(dir, 'session-photos.yaml'), sessionYaml('photos/{camera}/{frame}.png'));
}, 120_000);

function readCsv(file: string): string[][] {
  return fs.readFileSync(file, 'utf8').trim().split('\n').map((l) => l.split(','));
}

describe('rigsolve detect (in-process)', () => {
  test('the rendered set has co-visible frames (test precondition)', () => {
    expect(photos.filter((p) => p.camera === 'cam_a').length).toBeGreaterThanOrEqual(5);
    expect(photos.filter((p) => p.camera === 'cam_b').length).toBeGreaterThanOrEqual(5);
  });

  test('writes detections.csv whose rows match the rendered ground truth within 0.1 px', async () => {
    const out = path.join(dir, 'det-truth.csv');
    const r = await cli(['detect', path.join(dir, 'session.yaml'), '--images', path.join(dir, 'photos/{camera}/{frame}.png'), '--out', out]);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/cam_a +\d+ +\d+ +- +0/);
    const rows = readCsv(out);
    expect(rows[0]).toEqual(['frame', 'camera', 'target', 'point', 'u', 'v']);
    expect(rows.length - 1).toBe(photos.length * 30);
    const truth = new Map(photos.map((p) => [`${p.frame}/${p.camera}`, p.cornersPx]));
    let worst = 0;
    for (const [frame, camera, target, point, u, v] of rows.slice(1)) {
      expect(target).toBe('board');
      const c = truth.get(`${frame}/${camera}`)!;
      const id = Number(point);
      worst = Math.max(worst, Math.hypot(Number(u) - c[2 * id]!, Number(v) - c[2 * id + 1]!));
    }
    expect(worst).toBeLessThan(0.1);
  });

  test('refuses to overwrite without --force, and overwrites with it', async () => {
    const out = path.join(dir, 'exists.csv');
    fs.writeFileSync(out, 'keep');
    const args = ['detect', path.join(dir, 'session.yaml'), '--images', path.join(dir, 'photos/{camera}/{frame}.png'), '--out', out, '--quiet'];
    const r = await cli(args);
    expect(r.code).toBe(2);
    expect(r.err).toContain('--force');
    expect(fs.readFileSync(out, 'utf8')).toBe('keep');
    expect((await cli([...args, '--force'])).code).toBe(0);
    expect(fs.readFileSync(out, 'utf8')).toMatch(/^frame,camera,target,point,u,v\n/);
  });

  test('a malformed pattern exits 2 with a clear message', async () => {
    const r = await cli(['detect', path.join(dir, 'session.yaml'), '--images', path.join(dir, 'photos/{camera}/all.png'), '--out', path.join(dir, 'x.csv')]);
    expect(r.code).toBe(2);
    expect(r.err).toContain('has no {frame} placeholder');
    const u = await cli(['detect', path.join(dir, 'session.yaml'), '--images', path.join(dir, '{cam}/{frame}.png'), '--out', path.join(dir, 'x.csv')]);
    expect(u.code).toBe(2);
    expect(u.err).toContain('unknown placeholder {cam}');
  });

  test('a camera without images exits 2 naming the pattern and the camera', async () => {
    const pattern = path.join(dir, 'photos/{camera}/{frame}.jpg');
    const r = await cli(['detect', path.join(dir, 'session.yaml'), '--images', pattern, '--out', path.join(dir, 'x.csv')]);
    expect(r.code).toBe(2);
    expect(r.err).toContain(`camera "cam_a" matches the pattern "${pattern}"`);
    expect(r.err).toContain('camera "cam_b"');
    const only = path.join(dir, 'only-a');
    fs.mkdirSync(path.join(only, 'cam_a'), { recursive: true });
    fs.copyFileSync(photos[0]!.file, path.join(only, 'cam_a', 'f1.png'));
    const r2 = await cli(['detect', path.join(dir, 'session.yaml'), '--images', path.join(only, '{camera}/{frame}.png'), '--out', path.join(dir, 'x.csv')]);
    expect(r2.code).toBe(2);
    expect(r2.err).toContain('camera "cam_b"');
    expect(r2.err).toContain('does not exist');
    expect(r2.err).not.toContain('camera "cam_a"');
    expect(fs.existsSync(path.join(dir, 'x.csv'))).toBe(false);
  });

  test('no pattern at all exits 2 and says how to give one', async () => {
    const r = await cli(['detect', path.join(dir, 'session.yaml')]);
    expect(r.code).toBe(2);
    expect(r.err).toContain('--images');
  });

  test('images without any board exit 1 with what to do per reason, and nothing is written', async () => {
    const blank = path.join(dir, 'blank');
    const img = { width: 640, height: 400, data: new Float32Array(640 * 400).fill(120) };
    for (const c of ['cam_a', 'cam_b']) {
      fs.mkdirSync(path.join(blank, c), { recursive: true });
      fs.writeFileSync(path.join(blank, c, '001.png'), encodePng(img));
    }
    fs.writeFileSync(path.join(blank, 'cam_b', '002.png'), 'not an image');
    const out = path.join(blank, 'det.csv');
    const r = await cli(['detect', path.join(dir, 'session.yaml'), '--images', path.join(blank, '{camera}/{frame}.png'), '--out', out]);
    expect(r.code).toBe(1);
    expect(r.out).toMatch(/cam_b +2 +0 +no_corners 1, unreadable 1/);
    expect(r.err).toContain('no checkerboard found in any of the 3 images');
    expect(r.err).toContain('no_corners (2 images');
    expect(r.err).toContain('check exposure and focus');
    expect(fs.existsSync(out)).toBe(false);
  });

  test('images of the wrong size exit 2', async () => {
    const small = path.join(dir, 'small');
    const img = { width: 320, height: 200, data: new Float32Array(320 * 200).fill(120) };
    for (const c of ['cam_a', 'cam_b']) {
      fs.mkdirSync(path.join(small, c), { recursive: true });
      fs.writeFileSync(path.join(small, c, '1.png'), encodePng(img));
    }
    const r = await cli(['detect', path.join(dir, 'session.yaml'), '--images', path.join(small, '{camera}/{frame}.png'), '--out', path.join(small, 'd.csv')]);
    expect(r.code).toBe(2);
    expect(r.err).toContain('image is 320x200 but camera "cam_a" has resolution 640x400');
  });

  test('shows a progress indicator on a terminal, none with --quiet', async () => {
    const args = ['detect', path.join(dir, 'session.yaml'), '--images', path.join(dir, 'photos/{camera}/{frame}.png'), '--out', path.join(dir, 'p.csv'), '--force'];
    const r = await cli(args, { tty: true });
    expect(r.code).toBe(0);
    expect(r.err).toMatch(/\rdetecting: \d+\/\d+ images \(100 %\)/);
    const q = await cli([...args, '--quiet'], { tty: true });
    expect(q.err).toBe('');
  });
});

/** Rotation error (deg) and translation error (mm) of cam_b in a written rig file against T_rig_b. */
function rigError(rigFile: string): { rotDeg: number; transMm: number } {
  const rig = parseYaml(fs.readFileSync(rigFile, 'utf8')) as { cameras: { name: string; translation: number[]; quaternion_wxyz: number[] }[] };
  const b = rig.cameras.find((c) => c.name === 'cam_b')!;
  const [w, x, y, z] = b.quaternion_wxyz as [number, number, number, number];
  // Quaternion to rotation matrix (w, x, y, z), the standard unit-quaternion formula.
  const R = Float64Array.from([
    1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y),
    2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x),
    2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y),
  ]);
  const dT = compose(inverse(T_rig_b), { R, t: Float64Array.from(b.translation) });
  const rv = so3Log(dT.R);
  return { rotDeg: (Math.hypot(rv[0]!, rv[1]!, rv[2]!) * 180) / Math.PI, transMm: 1000 * Math.hypot(...(b.translation.map((v, i) => v - T_rig_b.t[i]!) as [number, number, number])) };
}

describe('detect then solve, end to end in-process', () => {
  test('detect writes the session detections, solve recovers the true rig', async () => {
    const d = await cli(['detect', path.join(dir, 'session.yaml'), '--images', path.join(dir, 'photos/{camera}/{frame}.png'), '--quiet']);
    expect(d.code).toBe(0);
    expect(fs.existsSync(path.join(dir, 'detections.csv'))).toBe(true);
    const rigFile = path.join(dir, 'rig.yaml');
    const s = await cli(['solve', path.join(dir, 'session.yaml'), '--out', rigFile, '--quiet']);
    expect(s.err).toBe('');
    expect(s.code).toBe(0);
    const e = rigError(rigFile);
    expect(e.rotDeg).toBeLessThan(0.1);
    expect(e.transMm).toBeLessThan(2);
  }, 60_000);

  test('solve on a session whose detections: is an image pattern detects first, in memory', async () => {
    const rigFile = path.join(dir, 'rig-photos.yaml');
    const s = await cli(['solve', path.join(dir, 'session-photos.yaml'), '--out', rigFile]);
    expect(s.code).toBe(0);
    expect(s.err).toMatch(/detected \d+ board views in \d+ images/);
    const e = rigError(rigFile);
    expect(e.rotDeg).toBeLessThan(0.1);
    expect(e.transMm).toBeLessThan(2);
    // Nothing but the rig file is written.
    expect(fs.readdirSync(dir).filter((f) => f.startsWith('detections'))).toEqual(['detections.csv']);
  }, 60_000);
});
