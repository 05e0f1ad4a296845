import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, test } from 'vitest';
import { CAMERA_MODEL_NAMES } from './model.js';
import { cameraModel, distortionCount, distortionNames, isCameraModelName, paramCount, paramNames } from './registry.js';

/** formats.md: `<repoRoot>/../shared/docs/formats.md`, else `/work/shared/docs/formats.md`. */
function formatsMd(): string {
  const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
  const candidates = [path.resolve(repoRoot, '../shared/docs/formats.md'), '/work/shared/docs/formats.md'];
  for (const c of candidates) if (existsSync(c)) return readFileSync(c, 'utf8');
  throw new Error(`formats.md not found; looked in ${candidates.join(' and ')}`);
}

describe('camera model registry', () => {
  test('parameter names match the camera-model table of formats.md', () => {
    // Rows like: | `brown-conrady` | `fx fy cx cy` + `k1 k2 p1 p2 k3`  | ... |
    const rows = new Map<string, string[]>();
    const section = formatsMd().split(/^## /m).find((s) => s.startsWith('Camera models'));
    expect(section).toBeDefined();
    for (const line of section!.split('\n')) {
      const m = /^\|\s*`([a-z-]+)`\s*\|\s*([^|]+)\|/.exec(line);
      if (!m || m[1] === 'model') continue; // skip the header row
      const names = [...m[2]!.matchAll(/`([^`]+)`/g)].flatMap((g) => g[1]!.trim().split(/\s+/));
      rows.set(m[1]!, names);
    }
    expect([...rows.keys()].sort()).toEqual([...CAMERA_MODEL_NAMES].sort());
    for (const name of CAMERA_MODEL_NAMES) {
      expect(paramNames(name)).toEqual(rows.get(name));
      expect(paramCount(name)).toBe(rows.get(name)!.length);
      expect(distortionCount(name)).toBe(rows.get(name)!.length - 4);
      expect(distortionNames(name)).toEqual(rows.get(name)!.slice(4));
    }
  });

  test('counts: pinhole 4/0, brown-conrady 9/5, kannala-brandt 8/4', () => {
    expect([paramCount('pinhole'), distortionCount('pinhole')]).toEqual([4, 0]);
    expect([paramCount('brown-conrady'), distortionCount('brown-conrady')]).toEqual([9, 5]);
    expect([paramCount('kannala-brandt'), distortionCount('kannala-brandt')]).toEqual([8, 4]);
  });

  test('lookup by name returns the model with that name; unknown names throw a RangeError listing the known ones', () => {
    for (const name of CAMERA_MODEL_NAMES) expect(cameraModel(name).name).toBe(name);
    expect(isCameraModelName('fisheye')).toBe(false);
    expect(() => cameraModel('fisheye')).toThrow(RangeError);
    expect(() => cameraModel('fisheye')).toThrow(/pinhole, brown-conrady, kannala-brandt/);
  });
});
