import * as fs from 'node:fs';
import * as path from 'node:path';
import { describe, expect, test } from 'vitest';
import { buildTarget, DEFAULT_FOCAL_PER_WIDTH, loadSession } from './session.js';
import { catchInput, VALID_CSV, VALID_SESSION, writeSessionFixture } from '../testing/io-fixtures.js';

describe('loadSession', () => {
  test('loads a valid session with its detections', () => {
    const file = writeSessionFixture();
    const s = loadSession(file);
    expect(s.format).toBe('rig-session/1');
    expect(s.name).toBe('test-rig');
    expect(s.path).toBe(path.resolve(file));
    expect(s.referenceCamera).toBe('cam_a');
    expect(s.scene).toBe('moving_targets');
    expect(s.cameras.map((c) => c.name)).toEqual(['cam_a', 'cam_b']);
    const a = s.cameras[0]!;
    expect(Array.from(a.params)).toEqual([500, 500, 319.5, 239.5, -0.1, 0.01, 0, 0, 0]);
    expect(a.intrinsicsGiven).toBe(true);
    expect(a.solveIntrinsics).toBe(false);
    expect(a.pixelSigma).toBe(0.5);
    expect(s.cameras[1]!.pixelSigma).toBe(1);
    expect(Array.from(s.cameras[1]!.params)).toEqual([450, 450, 320, 240]);
    expect(s.targets[0]!.numPoints).toBe(12);
    expect(s.targets[1]!.numPoints).toBe(4);
    expect(s.frames).toEqual(['f0', 'f1']);
    expect(s.detections.count).toBe(6);
    expect(Array.from(s.detections.camera)).toEqual([0, 0, 1, 0, 1, 1]);
    expect(Array.from(s.detections.target)).toEqual([0, 0, 0, 1, 1, 0]);
    expect(Array.from(s.detections.point)).toEqual([0, 11, 0, 3, 0, 5]);
    expect(Array.from(s.detections.line)).toEqual([2, 3, 4, 5, 6, 7]);
    expect(s.detections.sigma.every((x) => Number.isNaN(x))).toBe(true);
    expect(s.detectionsPath).toBe(path.join(path.dirname(path.resolve(file)), 'detections.csv'));
  });

  test('omitted intrinsics with solve_intrinsics get documented defaults and intrinsicsGiven=false', () => {
    const session = VALID_SESSION.replace(
      '    focal: [500.0, 500.0]\n    center: [319.5, 239.5]\n    distortion: [-0.1, 0.01, 0.0, 0.0, 0.0]\n',
      '    solve_intrinsics: true\n    fixed_intrinsics: [k3, p1, p2]\n',
    ).replace('name: test-rig\n', '');
    expect(session).not.toContain('focal: [500.0');
    const s = loadSession(writeSessionFixture(session, VALID_CSV, 'front-rig.yaml'));
    const a = s.cameras[0]!;
    expect(a.intrinsicsGiven).toBe(false);
    expect(a.solveIntrinsics).toBe(true);
    expect(a.fixedIntrinsics).toEqual(['k3', 'p1', 'p2']);
    expect(Array.from(a.params)).toEqual([DEFAULT_FOCAL_PER_WIDTH * 640, DEFAULT_FOCAL_PER_WIDTH * 640, 319.5, 239.5, 0, 0, 0, 0, 0]);
    expect(s.name).toBe('front-rig'); // defaults to the file name
  });

  test('gathers every issue of a file before failing, each with file, line and path', () => {
    const bad = VALID_SESSION.replace('focal: [500.0, 500.0]', 'focal: [0, 500.0]')
      .replace('square: 0.05', 'square: 0')
      .replace('reference_camera: cam_a', 'reference_camera: cam_q')
      .replace('pixel_sigma: 0.5', 'pixel_sigma: -1\n    lens: wide');
    const file = writeSessionFixture(bad);
    const err = catchInput(() => loadSession(file));
    expect(err.code).toBe('session.invalid');
    expect(err.exitCode).toBe(2);
    const paths = err.issues.map((i) => i.path);
    expect(paths).toEqual(expect.arrayContaining(['cameras[0].focal[0]', 'targets[0].square', 'reference_camera', 'cameras[0].pixel_sigma', 'cameras[0].lens']));
    for (const i of err.issues) {
      expect(i.file).toBe(file);
      expect(i.line).toBeGreaterThan(0);
      expect(i.hint).toBeTruthy();
    }
    const lines = bad.split('\n');
    const focal = err.issues.find((i) => i.path === 'cameras[0].focal[0]')!;
    expect(lines[focal.line! - 1]).toContain('focal: [0, 500.0]');
    const lens = err.issues.find((i) => i.path === 'cameras[0].lens')!;
    expect(lines[lens.line! - 1]).toContain('lens: wide');
  });

  test('detections issues are reported together with session issues', () => {
    const file = writeSessionFixture(VALID_SESSION.replace('square: 0.05', 'square: 0'), VALID_CSV.replace('f0,cam_a,board,0,100.0', 'f0,cam_x,board,0,100.0'));
    const err = catchInput(() => loadSession(file));
    expect(err.issues.some((i) => i.path === 'targets[0].square')).toBe(true);
    expect(err.issues.some((i) => i.file?.endsWith('detections.csv') && i.line === 2)).toBe(true);
  });

  test('a session file with another format stops after the format issue', () => {
    const file = writeSessionFixture(VALID_SESSION.replace('rig-session/1', 'rig-calibration/1'));
    const err = catchInput(() => loadSession(file));
    expect(err.issues).toHaveLength(1);
    expect(err.issues[0]!.hint).toContain('pass a session file');
  });

  test('a file larger than the limit is refused before it is read', () => {
    const file = writeSessionFixture();
    fs.truncateSync(file, 64 * 1024 * 1024 + 1);
    const err = catchInput(() => loadSession(file));
    expect(err.issues[0]!.message).toContain('larger than the 64 MiB limit');
  });
});

describe('loadSession detections modes', () => {
  const withPattern = VALID_SESSION.replace('detections: detections.csv', 'detections: photos/{camera}/{frame}.png');

  test("'skip' loads a session whose detections file does not exist yet, with no detections", () => {
    const file = writeSessionFixture(VALID_SESSION, null);
    expect(catchInput(() => loadSession(file)).issues[0]!.message).toContain('not found');
    const s = loadSession(file, { detections: 'skip' });
    expect(s.cameras).toHaveLength(2);
    expect(s.detections.count).toBe(0);
    expect(s.frames).toEqual([]);
    expect(s.detectionsPath).toBe(path.join(path.dirname(path.resolve(file)), 'detections.csv'));
    expect(s.detectionsPattern).toBeUndefined();
  });

  test("'skip' still reports session issues", () => {
    const file = writeSessionFixture(VALID_SESSION.replace('reference_camera: cam_a', 'reference_camera: cam_x'), null);
    expect(catchInput(() => loadSession(file, { detections: 'skip' })).issues[0]!.message).toContain('cam_x');
  });

  test('an image pattern is an issue by default and accepted on request, resolved against the session folder', () => {
    const file = writeSessionFixture(withPattern, null);
    const err = catchInput(() => loadSession(file));
    expect(err.issues).toHaveLength(1);
    expect(err.issues[0]!.path).toBe('detections');
    expect(err.issues[0]!.hint).toContain('rigsolve detect');
    for (const mode of ['csv-or-images', 'skip'] as const) {
      const s = loadSession(file, { detections: mode });
      expect(s.detectionsPattern).toBe(path.join(path.dirname(path.resolve(file)), 'photos/{camera}/{frame}.png'));
      expect(s.detections.count).toBe(0);
    }
  });

  test("'csv-or-images' reads a CSV as usual", () => {
    const s = loadSession(writeSessionFixture(), { detections: 'csv-or-images' });
    expect(s.detections.count).toBe(6);
    expect(s.detectionsPattern).toBeUndefined();
  });
});

describe('buildTarget', () => {
  test('checkerboard point id = row*columns + column at (column*square, row*square, 0)', () => {
    const t = buildTarget({ name: 'b', kind: 'checkerboard', inner_corners: [4, 3], square: 0.05 });
    expect(t.numPoints).toBe(12);
    expect(t.innerCorners).toEqual([4, 3]);
    // id 6 = row 1, column 2 (formats.md checkerboard convention)
    expect(Array.from(t.points.subarray(18, 21))).toEqual([2 * 0.05, 1 * 0.05, 0]);
    // id 11 = row 2, column 3
    expect(Array.from(t.points.subarray(33, 36))).toEqual([3 * 0.05, 2 * 0.05, 0]);
  });

  test('points target keeps the list order as ids', () => {
    const t = buildTarget({ name: 'p', kind: 'points', points: [[0, 0, 0], [1, 2, 3], [4, 5, 6], [7, 8, 9]] });
    expect(t.numPoints).toBe(4);
    expect(Array.from(t.points)).toEqual([0, 0, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
  });
});
