/**
 * The library example shown in the README (examples/api/solve-example.mjs)
 * runs against the built package, imported by its own name ('rigsolve',
 * resolved through package.json "exports"), and recovers the simulated
 * stereo baseline; the type declarations accept a typed consumer and reject
 * a wrong call. Builds dist first when it is missing or older than src.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as nodePath from 'node:path';
import { beforeAll, describe, expect, test } from 'vitest';
import { loadRigDescription } from '../src/rig/description-file.js';
import { simulate } from '../src/rig/simulate.js';
import { repoRoot } from '../src/testing/paths.js';

const root = repoRoot();
const tscBin = nodePath.join(root, 'node_modules', 'typescript', 'bin', 'tsc');

function newestSourceMtime(dir: string): number {
  let t = 0;
  for (const e of fs.readdirSync(dir, { withFileTypes: true })) {
    const p = nodePath.join(dir, e.name);
    if (e.isDirectory()) t = Math.max(t, newestSourceMtime(p));
    else if (e.name.endsWith('.ts') && !e.name.endsWith('.test.ts')) t = Math.max(t, fs.statSync(p).mtimeMs);
  }
  return t;
}

beforeAll(() => {
  const built = nodePath.join(root, 'dist', 'index.js');
  if (!fs.existsSync(built) || fs.statSync(built).mtimeMs < newestSourceMtime(nodePath.join(root, 'src'))) {
    // The package's own build (tsc, then the CLI entry made executable).
    execFileSync('npm', ['run', 'build', '--silent'], { cwd: root, stdio: 'pipe' });
  }
});

describe('command-line entry', () => {
  test('dist/cli/main.js is executable and runs through its shebang (how npx starts it)', () => {
    const main = nodePath.join(root, 'dist', 'cli', 'main.js');
    expect(fs.statSync(main).mode & 0o111).not.toBe(0);
    const r = spawnSync(main, ['--version'], { cwd: root, encoding: 'utf8' });
    expect(r.error).toBeUndefined();
    expect(r.status).toBe(0);
    expect(r.stdout.trim()).toMatch(/^\d+\.\d+\.\d+$/);
  });
});

describe('library API example', () => {
  test('examples/api/solve-example.mjs runs and recovers the simulated baseline within 1 mm', () => {
    const out = fs.mkdtempSync(nodePath.join(os.tmpdir(), 'rigsolve-api-'));
    const r = spawnSync(process.execPath, ['examples/api/solve-example.mjs', out], { cwd: root, encoding: 'utf8' });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    // Ground truth of the simulation the example runs (same description, same plan).
    const truth = simulate(loadRigDescription(nodePath.join(root, 'rigs', 'stereo-bench.yaml')), { frames: 20 }).T_ref_cam.get('right')!;
    const m = /^right: position \[([-\d.]+), ([-\d.]+), ([-\d.]+)\] mm/m.exec(r.stdout);
    expect(m, r.stdout).not.toBeNull();
    for (let k = 0; k < 3; k++) expect(Math.abs(Number(m![k + 1]) - truth.t[k]! * 1000)).toBeLessThan(1);
    expect(r.stdout).toMatch(/sigma0 [\d.]+, converged/);
    expect(fs.readFileSync(nodePath.join(out, 'report.html'), 'utf8')).toContain('data-testid="coverage-map"');
    expect(fs.readFileSync(nodePath.join(out, 'rig.yaml'), 'utf8')).toMatch(/^format: rig-calibration\/1/m);
  });

  test('the declarations type-check a consumer importing "rigsolve" and reject a wrong call', () => {
    const tsc = (file: string) =>
      spawnSync(
        process.execPath,
        [tscBin, '--noEmit', '--strict', '--module', 'nodenext', '--moduleResolution', 'nodenext', '--target', 'es2022', '--types', 'node', '--skipLibCheck', file],
        { cwd: root, encoding: 'utf8' },
      );
    const ok = tsc('examples/api/types-check.ts');
    expect(ok.stdout + ok.stderr).toBe('');
    expect(ok.status).toBe(0);
    const dir = fs.mkdtempSync(nodePath.join(root, 'examples', 'api', '.tmp-'));
    try {
      const bad = nodePath.join(dir, 'bad.ts');
      fs.writeFileSync(bad, "import { solveRig } from 'rigsolve';\nexport const x = solveRig('not a session', { loss: 'l2' });\n");
      const r = tsc(nodePath.relative(root, bad));
      expect(r.status).not.toBe(0);
      expect(r.stdout).toMatch(/TS2345/);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
});
