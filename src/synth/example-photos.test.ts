import * as fs from 'node:fs';
import * as path from 'node:path';
import { describe, expect, test } from 'vitest';
import { run } from '../cli/main.js';
import { loadRigFile } from '../io/rig-file.js';
import { quatToMatrix } from '../geometry/rotation.js';
import { so3Log } from '../geometry/so3.js';
import { repoRoot } from '../testing/paths.js';
import { makeTmpDir } from '../testing/io-fixtures.js';
import { boardInView } from './board-poses.js';
import { planBoardPoses, plannedCameras } from './photo-plan.js';
import { loadRigDescription } from '../rig/description-file.js';
import { compose, inverse } from '../geometry/se3.js';

const example = path.join(repoRoot(), 'examples/farm-rover-photos');

async function cli(argv: string[]) {
  let out = '';
  let err = '';
  const code = await run(argv, { stdout: (t) => (out += t), stderr: (t) => (err += t) });
  return { code, out, err };
}

describe('photo plan', () => {
  test('every frame keeps the whole board in view of the cameras it was planned for, and most frames are co-visible', () => {
    const desc = loadRigDescription(path.join(repoRoot(), 'rigs/farm-rover.yaml'));
    const cams = plannedCameras(desc);
    const board = { columns: 9, rows: 6, squareM: 0.08 };
    const plan = planBoardPoses(cams, board, { frames: 12, distanceM: [1.2, 2.0], tiltDeg: 30, seed: 3 });
    expect(plan).toHaveLength(12);
    for (const f of plan) {
      expect(f.fullyVisibleIn.length).toBeGreaterThanOrEqual(1);
      for (const name of f.fullyVisibleIn) {
        const c = cams.find((k) => k.name === name)!;
        expect(boardInView(c.camera, board, compose(inverse(c.T_ref_cam), f.T_ref_board), { marginPx: 3, minSquarePx: 20 })).toBe(true);
      }
    }
    expect(plan.filter((f) => f.fullyVisibleIn.length >= 2).length).toBeGreaterThanOrEqual(8);
  });
});

describe('examples/farm-rover-photos', () => {
  test('the committed photo set stays under 8 MB', () => {
    let bytes = 0;
    for (const cam of fs.readdirSync(path.join(example, 'photos'))) {
      for (const f of fs.readdirSync(path.join(example, 'photos', cam))) bytes += fs.statSync(path.join(example, 'photos', cam, f)).size;
    }
    expect(bytes).toBeLessThan(8e6);
  });

  test('detect finds every fully visible board at the rendered corners, and solve recovers the true rig', async () => {
    const dir = makeTmpDir('rigsolve-example-');
    const csv = path.join(dir, 'detections.csv');
    const d = await cli(['detect', path.join(example, 'session.yaml'), '--images', path.join(example, 'photos/{camera}/{frame}.jpg'), '--out', csv, '--quiet']);
    expect(d.code).toBe(0);
    // Ground truth: the renderer's exact projections in the photos where every inner corner is in view
    // (the detector may miss a board whose outer squares are cut by the image border).
    const truthRows = fs.readFileSync(path.join(example, 'corners-truth.csv'), 'utf8').trim().split('\n').slice(1);
    const detRows = fs.readFileSync(csv, 'utf8').trim().split('\n').slice(1);
    expect(detRows.length).toBeGreaterThanOrEqual(0.85 * truthRows.length);
    const truth = new Map(truthRows.map((l) => l.split(',')).map((r) => [r.slice(0, 4).join(','), [Number(r[4]), Number(r[5])]]));
    let sumSq = 0;
    for (const l of detRows) {
      const r = l.split(',');
      const t = truth.get(r.slice(0, 4).join(','))!;
      expect(t).toBeDefined();
      sumSq += (Number(r[4]) - t[0]!) ** 2 + (Number(r[5]) - t[1]!) ** 2;
    }
    expect(Math.sqrt(sumSq / detRows.length)).toBeLessThan(0.1);

    // Solve from a copy of the session that reads the CSV just written.
    fs.writeFileSync(path.join(dir, 'session.yaml'), fs.readFileSync(path.join(example, 'session.yaml')));
    const rigFile = path.join(dir, 'rig.yaml');
    const s = await cli(['solve', path.join(dir, 'session.yaml'), '--out', rigFile, '--quiet']);
    expect(s.code).toBe(0);
    const solved = loadRigFile(rigFile);
    const truthRig = loadRigFile(path.join(example, 'truth.yaml'));
    for (const t of truthRig.cameras) {
      const c = solved.cameras.find((k) => k.name === t.name)!;
      const dR = compose(
        inverse({ R: quatToMatrix(t.quaternion_wxyz), t: Float64Array.from(t.translation) }),
        { R: quatToMatrix(c.quaternion_wxyz), t: Float64Array.from(c.translation) },
      );
      const rv = so3Log(dR.R);
      const rotDeg = (Math.hypot(rv[0]!, rv[1]!, rv[2]!) * 180) / Math.PI;
      const transMm = 1000 * Math.hypot(...([0, 1, 2].map((i) => c.translation[i]! - t.translation[i]!) as [number, number, number]));
      expect(rotDeg).toBeLessThan(0.05);
      expect(transMm).toBeLessThan(1);
    }
  }, 180_000);
});
