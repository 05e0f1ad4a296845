import { afterAll, expect, test } from 'vitest';
import { rmSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { so3Exp } from '../geometry/so3.js';
import { renderExamplePhotos } from './render-examples.js';
import { detectFiles } from '../detect/workers.js';

const scratch = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..', 'test-artifacts', `render-examples-${process.pid}`);
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

test('two cameras x two frames: photos written where the board is fully visible, and detected at the true corners', async () => {
  const camera = { width: 400, height: 300, fx: 330, fy: 330, cx: 199.5, cy: 149.5, distortion: [-0.15, 0.03, 0, 0, 0] };
  // Left camera at the rig origin, right camera 0.1 m to the right, both looking along +z.
  const cameras = [
    { name: 'left', camera, T_rig_cam: { R: so3Exp([0, 0, 0]), t: new Float64Array([0, 0, 0]) } },
    { name: 'right', camera, T_rig_cam: { R: so3Exp([0, 0.05, 0]), t: new Float64Array([0.1, 0, 0]) } },
  ];
  const frames = [
    { frame: 'f000', T_rig_board: { R: so3Exp([0.1, -0.2, 0.05]), t: new Float64Array([-0.05, -0.05, 0.55]) } },
    { frame: 'f001', T_rig_board: { R: so3Exp([-0.15, 0.1, -0.1]), t: new Float64Array([0.0, -0.04, 0.6]) } },
    // Far to the side: not fully visible in either camera, so not written.
    { frame: 'f002', T_rig_board: { R: so3Exp([0, 0, 0]), t: new Float64Array([0.6, 0, 0.5]) } },
  ];
  const board = { columns: 6, rows: 5, squareM: 0.025 };
  const photos = renderExamplePhotos({ cameras, frames, board, outDir: scratch, fileName: (c, f) => `${c}-${f}.${c === 'left' ? 'png' : 'jpg'}` });
  expect(photos.map((p) => `${p.camera}/${p.frame}`)).toEqual(['left/f000', 'left/f001', 'right/f000', 'right/f001']);
  const results = await detectFiles(photos.map((p) => ({ file: p.file, board: { columns: 6, rows: 5 } })));
  results.forEach((r, k) => {
    expect(r.result?.found).toBe(true);
    if (!r.result?.found) return;
    for (let i = 0; i < 30; i++) {
      const e = Math.hypot(r.result.corners[2 * i]! - photos[k]!.cornersPx[2 * i]!, r.result.corners[2 * i + 1]! - photos[k]!.cornersPx[2 * i + 1]!);
      expect(e).toBeLessThan(0.3);
    }
  });
});
