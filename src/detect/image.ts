/**
 * Image decoding for detection: PNG (pngjs) and JPEG (jpeg-js) to a greyscale
 * image. Grey values are in [0, 255] as stored in the file (no gamma
 * linearisation: detection works on the encoded values, which keeps the
 * order of intensities and the position of every edge crossing).
 *
 * Colour is converted with the Rec. 601 luma weights
 * Y = 0.299 R + 0.587 G + 0.114 B (ITU-R BT.601); alpha is ignored.
 * 16-bit PNGs are scaled to [0, 255] by pngjs.
 */
import { readFile } from 'node:fs/promises';
import { PNG } from 'pngjs';
import jpeg from 'jpeg-js';
import { InputError } from '../errors.js';

/** Greyscale image, row-major, `data[v * width + u]`, values in [0, 255]. */
export interface GreyImage {
  width: number;
  height: number;
  data: Float32Array;
}

export type ImageFormat = 'png' | 'jpeg';

/** Recognises PNG and JPEG by their magic bytes; undefined otherwise. */
export function sniffImageFormat(bytes: Uint8Array): ImageFormat | undefined {
  if (bytes.length >= 8 && bytes[0] === 0x89 && bytes[1] === 0x50 && bytes[2] === 0x4e && bytes[3] === 0x47) return 'png';
  if (bytes.length >= 3 && bytes[0] === 0xff && bytes[1] === 0xd8 && bytes[2] === 0xff) return 'jpeg';
  return undefined;
}

/** Luma of an RGBA byte buffer (4 bytes per pixel) into a new GreyImage. */
export function rgbaToGrey(rgba: ArrayLike<number>, width: number, height: number): GreyImage {
  const n = width * height;
  const data = new Float32Array(n);
  for (let i = 0, k = 0; i < n; i++, k += 4) {
    data[i] = 0.299 * rgba[k]! + 0.587 * rgba[k + 1]! + 0.114 * rgba[k + 2]!;
  }
  return { width, height, data };
}

/**
 * Decodes PNG or JPEG bytes to grey. Throws InputError (code
 * 'image.unreadable') naming `fileName` when the bytes are neither format or
 * the decoder rejects them.
 */
export function decodeImage(bytes: Uint8Array, fileName = '<buffer>'): GreyImage {
  const format = sniffImageFormat(bytes);
  const buf = Buffer.isBuffer(bytes) ? bytes : Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  try {
    if (format === 'png') {
      const png = PNG.sync.read(buf);
      return rgbaToGrey(png.data, png.width, png.height);
    }
    if (format === 'jpeg') {
      const img = jpeg.decode(buf, { useTArray: true, formatAsRGBA: true, maxMemoryUsageInMB: 1024 });
      return rgbaToGrey(img.data, img.width, img.height);
    }
  } catch (e) {
    throw new InputError('image.unreadable', [
      { file: fileName, message: `cannot decode ${format} image: ${(e as Error).message}`, hint: 'check that the file is a complete PNG or JPEG' },
    ]);
  }
  throw new InputError('image.unreadable', [
    { file: fileName, message: 'not a PNG or JPEG file (unknown signature)', hint: 'convert the image to PNG or JPEG' },
  ]);
}

/** Reads and decodes an image file (PNG or JPEG, recognised by content). */
export async function readGreyImage(path: string): Promise<GreyImage> {
  let bytes: Buffer;
  try {
    bytes = await readFile(path);
  } catch (e) {
    throw new InputError('image.unreadable', [{ file: path, message: `cannot read file: ${(e as Error).message}`, hint: 'check the image path pattern' }]);
  }
  return decodeImage(bytes, path);
}

/**
 * Encodes a grey image as an 8-bit greyscale PNG (values rounded and clamped
 * to [0, 255]).
 */
export function encodePng(image: GreyImage): Buffer {
  const png = new PNG({ width: image.width, height: image.height, colorType: 0, inputColorType: 0, bitDepth: 8, inputHasAlpha: false });
  const n = image.width * image.height;
  const out = Buffer.alloc(n);
  for (let i = 0; i < n; i++) out[i] = Math.max(0, Math.min(255, Math.round(image.data[i]!)));
  png.data = out;
  return PNG.sync.write(png, { colorType: 0, inputColorType: 0, bitDepth: 8, inputHasAlpha: false });
}

/** Encodes a grey image as a baseline JPEG (quality 1..100). */
export function encodeJpeg(image: GreyImage, quality = 92): Buffer {
  const n = image.width * image.height;
  const rgba = Buffer.alloc(n * 4);
  for (let i = 0; i < n; i++) {
    const g = Math.max(0, Math.min(255, Math.round(image.data[i]!)));
    rgba[4 * i] = g;
    rgba[4 * i + 1] = g;
    rgba[4 * i + 2] = g;
    rgba[4 * i + 3] = 255;
  }
  return jpeg.encode({ data: rgba, width: image.width, height: image.height }, quality).data;
}
