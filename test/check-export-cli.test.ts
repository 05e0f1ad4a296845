/**
 * check, compare and export through the in-process CLI: exit codes 0 / 3 / 2,
 * a read-only reference rig left byte-identical, JSON output, atomic export
 * that refuses to overwrite.
 */
import * as fs from 'node:fs';
import * as path from 'node:path';
import { beforeAll, describe, expect, test } from 'vitest';
import { XMLParser } from 'fast-xml-parser';
import { run } from '../src/cli/main.js';
import { loadRigDescription } from '../src/rig/description-file.js';
import { simulate } from '../src/rig/simulate.js';
import { writeSimulation } from '../src/rig/simulate-files.js';
import { knockCamera } from '../src/testing/check-fixtures.js';
import { makeTmpDir } from '../src/testing/io-fixtures.js';
import { repoRoot } from '../src/testing/paths.js';

async function cli(argv: string[]) {
  let out = '';
  let err = '';
  const code = await run(argv, { stdout: (t) => (out += t), stderr: (t) => (err += t) });
  return { code, out, err };
}

const bench = loadRigDescription(path.join(repoRoot(), 'rigs', 'stereo-bench.yaml'));
let dir: string;
let rigPath: string;
let rigBytes: Buffer;

beforeAll(async () => {
  dir = makeTmpDir();
  writeSimulation(path.join(dir, 'calib'), simulate(bench, { frames: 25, seed: 7 }));
  writeSimulation(path.join(dir, 'same'), simulate(bench, { frames: 20, seed: 8 }));
  const knocked = knockCamera(bench, 'right', [0, 0.002, 0], [0, 0, 1], 0.2);
  writeSimulation(path.join(dir, 'knocked'), simulate(knocked, { frames: 20, seed: 8 }));
  rigPath = path.join(dir, 'rig.yaml');
  const solved = await cli(['solve', path.join(dir, 'calib', 'session.yaml'), '--out', rigPath, '--quiet']);
  expect(solved.code).toBe(0);
  fs.chmodSync(rigPath, 0o444);
  rigBytes = fs.readFileSync(rigPath);
});

describe('rigsolve check', () => {
  test('unchanged rig, new data: exit 0, every camera within tolerance, read-only rig file byte-identical', async () => {
    const r = await cli(['check', path.join(dir, 'same', 'session.yaml'), '--against', rigPath]);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    expect(r.out).toContain('overall: every camera is within tolerance');
    expect(r.out).toMatch(/right .* within tolerance/);
    expect(r.out).toContain('Caution:');
    expect(fs.readFileSync(rigPath).equals(rigBytes)).toBe(true);
    expect(fs.statSync(rigPath).mode & 0o777).toBe(0o444);
  });

  test('knocked camera: exit 3, JSON names it as moved; rig file byte-identical', async () => {
    const r = await cli(['check', path.join(dir, 'knocked', 'session.yaml'), '--against', rigPath, '--json']);
    expect(r.code).toBe(3);
    const j = JSON.parse(r.out) as { within_tolerance: boolean; cameras: { name: string; verdict: string; p_value: number | null; shift_mm: number }[]; rms_px: { name: string; held_fixed: number; fresh: number }[] };
    expect(j.within_tolerance).toBe(false);
    const right = j.cameras.find((c) => c.name === 'right')!;
    expect(right.verdict).toBe('moved');
    expect(right.p_value!).toBeLessThan(0.01);
    expect(j.cameras.find((c) => c.name === 'left')!.verdict).toBe('reference');
    const rms = j.rms_px.find((c) => c.name === 'right')!;
    expect(rms.held_fixed).toBeGreaterThan(2 * rms.fresh);
    expect(fs.readFileSync(rigPath).equals(rigBytes)).toBe(true);
  });

  test('loose tolerances let the knocked camera pass: exit 0', async () => {
    const r = await cli(['check', path.join(dir, 'knocked', 'session.yaml'), '--against', rigPath, '--max-shift-mm', '5', '--max-rotation-deg', '1']);
    expect(r.code).toBe(0);
  });

  test('invalid input and options: exit 2 with a ✖ line', async () => {
    const missing = await cli(['check', path.join(dir, 'nope.yaml'), '--against', rigPath]);
    expect(missing.code).toBe(2);
    expect(missing.err).toMatch(/^✖ .*nope\.yaml/m);
    const badTol = await cli(['check', path.join(dir, 'same', 'session.yaml'), '--against', rigPath, '--significance', '1.5']);
    expect(badTol.code).toBe(2);
    expect(badTol.err).toMatch(/significance level 1\.5/);
    const notRig = await cli(['check', path.join(dir, 'same', 'session.yaml'), '--against', path.join(dir, 'same', 'session.yaml')]);
    expect(notRig.code).toBe(2);
    expect(fs.readFileSync(rigPath).equals(rigBytes)).toBe(true);
  });
});

describe('rigsolve compare', () => {
  test('truth vs solve: exit 0 with significance; rig vs itself shift 0', async () => {
    const r = await cli(['compare', path.join(dir, 'calib', 'truth.yaml'), rigPath, '--json']);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out) as { cameras: { name: string; p_value: number | null; shift_mm: number }[] };
    expect(j.cameras.find((c) => c.name === 'right')!.p_value).not.toBeNull();
    const self = await cli(['compare', rigPath, rigPath, '--json']);
    expect(self.code).toBe(0);
    expect((JSON.parse(self.out) as { cameras: { shift_mm: number }[] }).cameras.every((c) => c.shift_mm === 0)).toBe(true);
  });

  test('the knocked truth against the original truth: exit 3 (no covariance: verdict on tolerance alone)', async () => {
    const r = await cli(['compare', path.join(dir, 'calib', 'truth.yaml'), path.join(dir, 'knocked', 'truth.yaml')]);
    expect(r.code).toBe(3);
    expect(r.out).toMatch(/right .*n\/a .*moved beyond tolerance/);
  });
});

describe('rigsolve export', () => {
  test('urdf to stdout parses; --out writes atomically and refuses to overwrite without --force', async () => {
    const r = await cli(['export', rigPath, '--to', 'urdf', '--base-frame', 'bench', '--base-pose', '0,0.06,0,0,0,0', '--body-frames']);
    expect(r.code).toBe(0);
    const doc = new XMLParser({ ignoreAttributes: false }).parse(r.out) as { robot: { link: unknown[]; joint: unknown[] } };
    expect(doc.robot.link).toHaveLength(5);
    expect(doc.robot.joint).toHaveLength(4);
    expect(r.out).toContain('<!-- Caution:');
    const out = path.join(dir, 'rig.json');
    expect((await cli(['export', rigPath, '--to', 'json', '--out', out])).code).toBe(0);
    const first = fs.readFileSync(out, 'utf8');
    expect(JSON.parse(first).transforms).toHaveLength(1);
    const again = await cli(['export', rigPath, '--to', 'json', '--out', out, '--body-frames']);
    expect(again.code).toBe(2);
    expect(again.err).toMatch(/already exists.*--force/);
    expect(fs.readFileSync(out, 'utf8')).toBe(first);
    expect((await cli(['export', rigPath, '--to', 'json', '--out', out, '--body-frames', '--force'])).code).toBe(0);
    expect(JSON.parse(fs.readFileSync(out, 'utf8')).transforms).toHaveLength(3);
  });

  test('option errors exit 2', async () => {
    expect((await cli(['export', rigPath, '--to', 'sdf'])).code).toBe(2);
    expect((await cli(['export', rigPath, '--to', 'urdf', '--base-frame', 'base'])).code).toBe(2);
    expect((await cli(['export', rigPath, '--to', 'urdf', '--base-pose', '0,0,0,0,0,0'])).code).toBe(2);
    expect((await cli(['export', rigPath, '--to', 'urdf', '--base-frame', 'base', '--base-pose', '0,0,0'])).code).toBe(2);
  });
});
