/**
 * Orientation rules, symmetric boards, harder imaging conditions and images
 * without a (matching) board. All images are rendered by the tests
 * (src/testing/render-board.ts) with exact ground truth.
 */
import { describe, expect, test } from 'vitest';
import { projectBoardPoint, renderBoard, type RenderCamera } from '../synth/render-board.js';
import { sampleVisibleBoard } from '../synth/board-poses.js';
import { DETECT_TEST_CAMERA } from '../testing/detect-fixtures.js';
import { gaussian, rng } from '../testing/numeric.js';
import { detectCheckerboard, gaussianBlur } from './checkerboard.js';
import type { GreyImage } from './image.js';
import { OptionsError } from '../errors.js';

const camera: RenderCamera = DETECT_TEST_CAMERA;

/** Board-id permutation for an in-plane rotation by k·90° of a C x R grid: id(c, r) → id of the rotated point. */
function rotatedId(C: number, R: number, k: number, c: number, r: number): number {
  switch (k) {
    case 0:
      return r * C + c;
    case 1:
      return c * C + (C - 1 - r);
    case 2:
      return (R - 1 - r) * C + (C - 1 - c);
    default:
      return (C - 1 - c) * C + r;
  }
}

describe('symmetric boards: ids up to the reported ambiguity, resolved by the stated rule', () => {
  const cases: { C: number; R: number; ambiguity: 'rot180' | 'rot90'; rotations: number[] }[] = [
    { C: 8, R: 6, ambiguity: 'rot180', rotations: [0, 2] },
    { C: 7, R: 5, ambiguity: 'rot180', rotations: [0, 2] },
    // Square boards: a 90° turn moves the square outside corner 0 to the one outside
    // corner C−1, which is black too iff C is even.
    { C: 8, R: 8, ambiguity: 'rot90', rotations: [0, 1, 2, 3] },
    { C: 7, R: 7, ambiguity: 'rot180', rotations: [0, 2] },
  ];
  test.each([
    ...cases.map((c) => ({ ...c, inverted: false })),
    // Inverted print (white squares outside the corners): the colour rule cannot hold, the labelings
    // that keep handedness remain (2 for 8 x 6, 4 for 8 x 8).
    { C: 8, R: 6, ambiguity: 'rot180' as const, rotations: [0, 2], inverted: true },
    { C: 8, R: 8, ambiguity: 'rot90' as const, rotations: [0, 1, 2, 3], inverted: true },
  ])('$C x $R inner corners, inverted colours $inverted → $ambiguity', ({ C, R, ambiguity, rotations, inverted }) => {
    const board = { columns: C, rows: R, squareM: 0.03 };
    const u = rng(C * 100 + R);
    for (let n = 0; n < 6; n++) {
      const T = sampleVisibleBoard(u, camera, board, { maxTiltRad: 0.6 });
      const colours = inverted ? { black: 0.92, white: 0.08 } : {};
      const r = renderBoard(camera, board, T, { blurSigmaPx: 0.7, noiseSigma: 2 / 255, seed: n + 1, ...colours });
      const d = detectCheckerboard(r.image, board);
      expect(d.found).toBe(true);
      if (!d.found) continue;
      expect(d.ambiguous180).toBe(true);
      expect(d.ambiguity).toBe(ambiguity);
      // Which rotation of the true ids did the detector return?
      const matching = rotations.filter((k) => {
        for (let rr = 0; rr < R; rr++) {
          for (let c = 0; c < C; c++) {
            const j = rotatedId(C, R, k, c, rr);
            const i = rr * C + c;
            if (Math.hypot(d.corners[2 * i]! - r.cornersPx[2 * j]!, d.corners[2 * i + 1]! - r.cornersPx[2 * j + 1]!) > 0.5) return false;
          }
        }
        return true;
      });
      expect(matching.length).toBe(1);
      // Rule: among the admissible labelings, +x (corner 0 → corner C−1) points most nearly along +u.
      const xDirU = (k: number): number => {
        const a = rotatedId(C, R, k, 0, 0), b = rotatedId(C, R, k, C - 1, 0);
        const du = r.cornersPx[2 * b]! - r.cornersPx[2 * a]!, dv = r.cornersPx[2 * b + 1]! - r.cornersPx[2 * a + 1]!;
        return du / Math.hypot(du, dv);
      };
      for (const k of rotations) expect(xDirU(matching[0]!)).toBeGreaterThanOrEqual(xDirU(k));
    }
  });
});

test('a board may be declared in either order: [6, 9] on a 9 x 6 board gives the same board turned by 90°', () => {
  // Physical 9 x 6 board: square (i, j) is black iff i + j is even, so the squares diagonally
  // outside corners (0, 0) and (0, 5) (squares (−1, −1) and (−1, 5)) are black, those outside
  // (8, 0) and (8, 5) (squares (8, −1), (8, 5)) white. Declared as 6 columns x 9 rows, corner 0
  // must sit at a black-outside corner with +x along the 6-corner side and the image handedness
  // kept: that is physical (0, 5) with +x' = −y, +y' = +x, i.e. physical (c, r) = (r', 5 − c').
  const u = rng(11);
  for (let n = 0; n < 4; n++) {
    const T = sampleVisibleBoard(u, camera, { columns: 9, rows: 6, squareM: 0.03 }, { maxTiltRad: 0.5 });
    const r = renderBoard(camera, { columns: 9, rows: 6, squareM: 0.03 }, T, { blurSigmaPx: 0.7, noiseSigma: 2 / 255, seed: n });
    const d = detectCheckerboard(r.image, { columns: 6, rows: 9 });
    expect(d.found).toBe(true);
    if (!d.found) continue;
    expect(d.ambiguous180).toBe(false);
    for (let rp = 0; rp < 9; rp++) {
      for (let cp = 0; cp < 6; cp++) {
        const i = rp * 6 + cp;
        const j = (5 - cp) * 9 + rp;
        expect(Math.hypot(d.corners[2 * i]! - r.cornersPx[2 * j]!, d.corners[2 * i + 1]! - r.cornersPx[2 * j + 1]!)).toBeLessThan(0.3);
      }
    }
  }
});

describe('harder imaging conditions', () => {
  test('uneven lighting, gamma 2.2, blur 1.5 px, noise 5/255, strong barrel distortion: found with correct ids', () => {
    const cam: RenderCamera = { ...camera, distortion: [-0.35, 0.12, 0.0005, 0.0008, -0.01] };
    const board = { columns: 9, rows: 6, squareM: 0.03 };
    const u = rng(99);
    let found = 0, sumSq = 0, count = 0;
    for (let n = 0; n < 20; n++) {
      const T = sampleVisibleBoard(u, cam, board, { maxTiltRad: 0.7 });
      const r = renderBoard(cam, board, T, {
        blurSigmaPx: 1.5,
        noiseSigma: 5 / 255,
        gamma: 2.2,
        lighting: { a: 0.9 * (u() * 2 - 1), b: 0.9 * (u() * 2 - 1), c: -0.6 },
        seed: 500 + n,
      });
      const d = detectCheckerboard(r.image, board);
      if (!d.found) continue;
      found++;
      for (let i = 0; i < 54; i++) {
        const e2 = (d.corners[2 * i]! - r.cornersPx[2 * i]!) ** 2 + (d.corners[2 * i + 1]! - r.cornersPx[2 * i + 1]!) ** 2;
        expect(Math.sqrt(e2)).toBeLessThan(1);
        sumSq += e2;
        count++;
      }
    }
    expect(found).toBeGreaterThanOrEqual(19);
    expect(Math.sqrt(sumSq / count)).toBeLessThan(0.15);
  });
});

/** Paints filled, rotated rectangles (2x2 supersampled, painter's order) with random grey levels. */
function rectanglesImage(u: () => number, width: number, height: number, count: number): GreyImage {
  const W2 = 2 * width, H2 = 2 * height;
  const fine = new Float32Array(W2 * H2).fill(40 + 170 * u());
  for (let n = 0; n < count; n++) {
    const cx = u() * W2, cy = u() * H2, hw = 10 + 120 * u(), hh = 10 + 120 * u(), a = u() * Math.PI, g = 255 * u();
    const ca = Math.cos(a), sa = Math.sin(a);
    const ext = Math.ceil(Math.hypot(hw, hh));
    for (let y = Math.max(0, Math.floor(cy - ext)); y < Math.min(H2, cy + ext); y++) {
      for (let x = Math.max(0, Math.floor(cx - ext)); x < Math.min(W2, cx + ext); x++) {
        const dx = x + 0.5 - cx, dy = y + 0.5 - cy;
        if (Math.abs(ca * dx + sa * dy) < hw && Math.abs(-sa * dx + ca * dy) < hh) fine[y * W2 + x] = g;
      }
    }
  }
  const data = new Float32Array(width * height);
  for (let v = 0; v < height; v++) {
    for (let x = 0; x < width; x++) {
      const k = 2 * v * W2 + 2 * x;
      data[v * width + x] = (fine[k]! + fine[k + 1]! + fine[k + W2]! + fine[k + W2 + 1]!) / 4;
    }
  }
  const out = gaussianBlur(data, width, height, 0.7);
  for (let i = 0; i < out.length; i++) out[i] = Math.round(Math.min(255, Math.max(0, out[i]! + 2 * gaussian(u))));
  return { width, height, data: out };
}

describe('no detection without a matching board', () => {
  const W = 640, H = 480;
  const board = { columns: 9, rows: 6 };
  test('noise images', () => {
    const u = rng(5);
    for (let n = 0; n < 6; n++) {
      const raw = new Float32Array(W * H);
      for (let i = 0; i < raw.length; i++) raw[i] = 128 + 40 * gaussian(u);
      const img = { width: W, height: H, data: gaussianBlur(raw, W, H, 0.5 + n * 0.4) };
      expect(detectCheckerboard(img, board).found).toBe(false);
    }
  });
  test('smooth gradients', () => {
    const u = rng(6);
    for (let n = 0; n < 6; n++) {
      const a = u() * 200, b = u() * 200, c = u() * 150;
      const data = new Float32Array(W * H);
      for (let v = 0; v < H; v++) for (let x = 0; x < W; x++) data[v * W + x] = Math.round(Math.min(255, 20 + (a * x) / W + (b * v) / H + (c * ((x - W / 2) ** 2 + (v - H / 2) ** 2)) / (W * W) + 2 * gaussian(u)));
      expect(detectCheckerboard({ width: W, height: H, data }, board).found).toBe(false);
    }
  });
  test('random rectangles', () => {
    const u = rng(7);
    for (let n = 0; n < 8; n++) {
      const img = rectanglesImage(u, W, H, 20 + 10 * n);
      expect(detectCheckerboard(img, board).found).toBe(false);
    }
  });
  test('a board of another size is rejected as wrong_size, also when it contains the declared size', () => {
    const u = rng(8);
    const T = sampleVisibleBoard(u, camera, { columns: 9, rows: 6, squareM: 0.03 }, { maxTiltRad: 0.4 });
    const r = renderBoard(camera, { columns: 9, rows: 6, squareM: 0.03 }, T, { blurSigmaPx: 0.7, noiseSigma: 2 / 255 });
    expect(detectCheckerboard(r.image, { columns: 9, rows: 6 }).found).toBe(true);
    for (const declared of [{ columns: 8, rows: 6 }, { columns: 9, rows: 5 }, { columns: 5, rows: 9 }]) {
      const d = detectCheckerboard(r.image, declared);
      expect(d.found).toBe(false);
      if (!d.found) expect(d.reason).toBe('wrong_size');
    }
    // Declared larger than the board: too few corners, or a grid that is too small.
    for (const declared of [{ columns: 10, rows: 6 }, { columns: 9, rows: 7 }]) {
      const d = detectCheckerboard(r.image, declared);
      expect(d.found).toBe(false);
      if (!d.found) expect(['wrong_size', 'no_corners']).toContain(d.reason);
    }
  });
  test('a partly visible board is not reported', () => {
    // Board larger than the view: some corners fall outside the image.
    const board9 = { columns: 9, rows: 6, squareM: 0.03 };
    const u = rng(9);
    let checked = 0;
    for (let n = 0; n < 40 && checked < 6; n++) {
      const T = sampleVisibleBoard(u, camera, board9, { maxTiltRad: 0.4 });
      // Slide the board sideways or up/down until some of its corners leave the image.
      const axis = u() < 0.5 ? 0 : 1, sign = u() < 0.5 ? -1 : 1;
      const uv = new Float64Array(2);
      const allInside = (): boolean => {
        for (let id = 0; id < 54; id++) {
          if (!projectBoardPoint(camera, T, (id % 9) * 0.03, Math.floor(id / 9) * 0.03, uv)) return false;
          if (uv[0]! < 0 || uv[1]! < 0 || uv[0]! > camera.width - 1 || uv[1]! > camera.height - 1) return false;
        }
        return true;
      };
      for (let k = 0; k < 100 && allInside(); k++) T.t[axis]! += sign * 0.01 * T.t[2]!;
      const r = renderBoard(camera, board9, T, { blurSigmaPx: 0.7, noiseSigma: 2 / 255 });
      if (r.allCornersInside) continue;
      checked++;
      expect(detectCheckerboard(r.image, board9).found).toBe(false);
    }
    expect(checked).toBe(6);
  });
  test('unusable declared sizes throw an OptionsError', () => {
    const img = { width: 64, height: 64, data: new Float32Array(64 * 64) };
    expect(() => detectCheckerboard(img, { columns: 1, rows: 6 })).toThrow(OptionsError);
    expect(() => detectCheckerboard(img, { columns: 2, rows: 2 })).toThrow(OptionsError);
    expect(() => detectCheckerboard(img, { columns: 4.5, rows: 6 })).toThrow(OptionsError);
  });
});
