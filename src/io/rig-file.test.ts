import * as fs from 'node:fs';
import * as path from 'node:path';
import { describe, expect, test } from 'vitest';
import { OptionsError, RigCalError } from '../errors.js';
import { loadRigFile, rigFileToYaml, writeRigFile } from './rig-file.js';
import { validRig, makeTmpDir } from '../testing/io-fixtures.js';
import { rng } from '../testing/numeric.js';
import type { RigFile } from './types.js';

/** Random doubles across the whole range: wide exponents, subnormals, -0, and values with 17 significant digits. */
function randomDoubles(n: number, seed: number): number[] {
  const u = rng(seed);
  const out: number[] = [-0, 0, 5e-324, -2.2250738585072014e-308, 1.7976931348623157e308, 0.1 + 0.2, 1 / 3, Math.PI];
  const buf = new DataView(new ArrayBuffer(8));
  while (out.length < n) {
    // Random bit patterns, keeping only finite values.
    buf.setUint32(0, Math.floor(u() * 2 ** 32));
    buf.setUint32(4, Math.floor(u() * 2 ** 32));
    const x = buf.getFloat64(0);
    if (Number.isFinite(x)) out.push(x);
    out.push((u() - 0.5) * 10 ** Math.floor(u() * 40 - 20));
  }
  return out.slice(0, n);
}

const bits = (x: number) => {
  const dv = new DataView(new ArrayBuffer(8));
  dv.setFloat64(0, x);
  return dv.getBigUint64(0);
};

describe('writeRigFile / loadRigFile', () => {
  test('round trip is exact to the bit for doubles (including -0 and subnormals)', () => {
    const dir = makeTmpDir();
    const rig = validRig();
    const xs = randomDoubles(36 + 3 + 3 + 5, 7);
    const cam = rig.cameras[1]!;
    // A symmetric, diagonally dominant (hence PSD) covariance from the random doubles; row and column 0 are ±0.
    const cov = xs.slice(0, 36);
    for (let i = 0; i < 6; i++) for (let j = 0; j < i; j++) cov[i * 6 + j] = cov[j * 6 + i]!;
    for (let k = 1; k < 6; k++) {
      cov[k] = k % 2 ? -0 : 0;
      cov[k * 6] = cov[k]!;
    }
    cov[0] = -0;
    for (let i = 1; i < 6; i++) {
      let s = 0;
      for (let j = 0; j < 6; j++) if (j !== i) s += Math.abs(cov[i * 6 + j]!);
      cov[i * 6 + i] = 2 * s + 1e-300;
    }
    cam.covariance = cov;
    cam.translation = [xs[36]!, xs[37]!, xs[38]!];
    cam.rpy_deg = [xs[39]!, xs[40]!, xs[41]!];
    cam.model = 'brown-conrady';
    cam.distortion = xs.slice(42, 47);
    rig.quality.sigma0 = 1.0000000000000002;
    const file = path.join(dir, 'rig.yaml');
    writeRigFile(file, rig);
    const back = loadRigFile(file);
    const flat = (r: RigFile) => [...r.cameras[1]!.covariance, ...r.cameras[1]!.translation, ...r.cameras[1]!.rpy_deg, ...r.cameras[1]!.distortion, r.quality.sigma0];
    const a = flat(rig).map(bits);
    const b = flat(back).map(bits);
    expect(b).toEqual(a);
    expect(Object.is(back.cameras[1]!.covariance[0], -0)).toBe(true);
    expect(back).toEqual(rig);
  });

  test('lists are written in flow style, covariance as one flow list of 36 numbers, contract key order', () => {
    const text = rigFileToYaml(validRig());
    expect(text.startsWith('format: rig-calibration/1\nname: test-rig\nroot: cam_a\ncameras:\n')).toBe(true);
    expect(text).toContain('    translation: [0.1, -0.02, 0.003]\n');
    const cov = text.split('\n').filter((l) => l.trimStart().startsWith('covariance:'));
    expect(cov).toHaveLength(2);
    for (const l of cov) expect(l.slice(l.indexOf('[') + 1, l.lastIndexOf(']')).split(',')).toHaveLength(36);
    expect(text).toContain('    parent: null\n');
  });

  test('extra fields added by the tool survive a round trip', () => {
    const dir = makeTmpDir();
    const rig = validRig();
    rig.cameras[0]!.intrinsics_sigma = [0.1, 0.2, 0.3, 0.4];
    rig.quality.solve_seconds = 1.25;
    const file = path.join(dir, 'r.yaml');
    writeRigFile(file, rig);
    const back = loadRigFile(file);
    expect(back.cameras[0]!.intrinsics_sigma).toEqual([0.1, 0.2, 0.3, 0.4]);
    expect(back.quality.solve_seconds).toBe(1.25);
  });

  test('refuses to write a rig that would not load back (NaN)', () => {
    const dir = makeTmpDir();
    const rig = validRig();
    rig.cameras[1]!.translation[0] = NaN;
    const file = path.join(dir, 'r.yaml');
    expect(() => writeRigFile(file, rig)).toThrow(RigCalError);
    expect(fs.existsSync(file)).toBe(false);
    expect(fs.readdirSync(dir)).toEqual([]);
  });

  test('never overwrites an existing file unless forced', () => {
    const dir = makeTmpDir();
    const file = path.join(dir, 'r.yaml');
    fs.writeFileSync(file, 'keep me\n');
    let err: unknown;
    try {
      writeRigFile(file, validRig());
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(OptionsError);
    expect((err as OptionsError).message).toContain('--force');
    expect((err as OptionsError).exitCode).toBe(2);
    expect(fs.readFileSync(file, 'utf8')).toBe('keep me\n');
    expect(fs.readdirSync(dir)).toEqual(['r.yaml']);
    writeRigFile(file, validRig(), { force: true });
    expect(loadRigFile(file).name).toBe('test-rig');
    expect(fs.readdirSync(dir)).toEqual(['r.yaml']);
  });
});
