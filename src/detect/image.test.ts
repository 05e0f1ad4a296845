import { describe, expect, test } from 'vitest';
import { PNG } from 'pngjs';
import { decodeImage, encodeJpeg, encodePng, rgbaToGrey, sniffImageFormat } from './image.js';
import { InputError } from '../errors.js';
import { renderBoard } from '../synth/render-board.js';
import { detectCheckerboard } from './checkerboard.js';
import { so3Exp } from '../geometry/so3.js';

describe('image decoding', () => {
  test('grey PNG round trip is exact', () => {
    const data = new Float32Array(7 * 5);
    for (let i = 0; i < data.length; i++) data[i] = (i * 37) % 256;
    const png = encodePng({ width: 7, height: 5, data });
    expect(sniffImageFormat(png)).toBe('png');
    const back = decodeImage(png);
    expect(back.width).toBe(7);
    expect(back.height).toBe(5);
    expect(Array.from(back.data)).toEqual(Array.from(data));
  });

  test('colour PNG is converted with the Rec. 601 luma weights', () => {
    // Y = 0.299 R + 0.587 G + 0.114 B (ITU-R BT.601).
    const png = new PNG({ width: 3, height: 1 });
    const px = [
      [255, 0, 0],
      [0, 255, 0],
      [10, 20, 200],
    ];
    px.forEach(([r, g, b], i) => png.data.set([r!, g!, b!, 255], 4 * i));
    const grey = decodeImage(PNG.sync.write(png));
    expect(grey.data[0]).toBeCloseTo(0.299 * 255, 3);
    expect(grey.data[1]).toBeCloseTo(0.587 * 255, 3);
    expect(grey.data[2]).toBeCloseTo(0.299 * 10 + 0.587 * 20 + 0.114 * 200, 3);
    expect(rgbaToGrey([0, 0, 255, 0], 1, 1).data[0]).toBeCloseTo(0.114 * 255, 3);
  });

  test('JPEG decodes close to the original and a board in a JPEG is still found accurately', () => {
    const cam = { width: 320, height: 240, fx: 300, fy: 300, cx: 159.5, cy: 119.5 };
    const board = { columns: 6, rows: 5, squareM: 0.03 };
    const R = so3Exp([0.2, -0.25, 0.3]);
    const t = new Float64Array([-0.075, -0.06, 0.4]);
    const r = renderBoard(cam, board, { R, t }, { blurSigmaPx: 0.7, noiseSigma: 2 / 255 });
    const jpg = encodeJpeg(r.image, 95);
    expect(sniffImageFormat(jpg)).toBe('jpeg');
    const back = decodeImage(jpg);
    let maxDiff = 0;
    for (let i = 0; i < back.data.length; i++) maxDiff = Math.max(maxDiff, Math.abs(back.data[i]! - r.image.data[i]!));
    expect(maxDiff).toBeLessThan(40);
    const d = detectCheckerboard(back, board);
    expect(d.found).toBe(true);
    if (!d.found) return;
    let sq = 0;
    for (let i = 0; i < 30; i++) sq += (d.corners[2 * i]! - r.cornersPx[2 * i]!) ** 2 + (d.corners[2 * i + 1]! - r.cornersPx[2 * i + 1]!) ** 2;
    expect(Math.sqrt(sq / 30)).toBeLessThan(0.1);
  });

  test('unknown or truncated bytes raise InputError image.unreadable naming the file', () => {
    expect(() => decodeImage(new Uint8Array([1, 2, 3, 4]), 'x.bin')).toThrow(InputError);
    try {
      decodeImage(encodePng({ width: 4, height: 4, data: new Float32Array(16) }).subarray(0, 30), 'cut.png');
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as InputError).code).toBe('image.unreadable');
      expect((e as InputError).issues[0]!.file).toBe('cut.png');
    }
  });
});
