/**
 * `rigsolve solve --report` and `rigsolve report` in-process: files written,
 * overwrite refused without --force (before any solving), a rig that does not
 * fit the session is exit 2, and stderr stays empty when it is not a terminal.
 */
import * as fs from 'node:fs';
import * as nodePath from 'node:path';
import { beforeAll, describe, expect, test } from 'vitest';
import { loadRigDescription } from '../rig/description-file.js';
import { simulate } from '../rig/simulate.js';
import { writeSimulation } from '../rig/simulate-files.js';
import { makeTmpDir } from '../testing/io-fixtures.js';
import { repoRoot } from '../testing/paths.js';
import { run } from './main.js';

async function cli(argv: string[], tty = false) {
  let out = '';
  let err = '';
  const code = await run(argv, { stdout: (t) => (out += t), stderr: (t) => (err += t), stderrIsTTY: tty });
  return { code, out, err };
}

let dir: string;
let session: string;

beforeAll(() => {
  dir = makeTmpDir('rigsolve-report-');
  writeSimulation(dir, simulate(loadRigDescription(nodePath.join(repoRoot(), 'rigs', 'stereo-bench.yaml')), { frames: 16 }));
  session = nodePath.join(dir, 'session.yaml');
});

describe('HTML report from the command line', () => {
  test('solve --report writes the rig and the report; nothing on stderr when it is not a terminal', async () => {
    const rig = nodePath.join(dir, 'rig.yaml');
    const report = nodePath.join(dir, 'solve.html');
    const r = await cli(['solve', session, '--out', rig, '--report', report]);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    expect(r.out).toContain(`report: ${report}`);
    const html = fs.readFileSync(report, 'utf8');
    expect(html).toContain('data-testid="coverage-map" data-camera="right"');
    expect(html).toContain(`Residuals and uncertainties from the solve of ${session}.`);
    // A second run refuses to overwrite either file, before solving.
    const again = await cli(['solve', session, '--out', nodePath.join(dir, 'rig2.yaml'), '--report', report]);
    expect(again.code).toBe(2);
    expect(again.err).toBe(`✖ ${report} already exists; pass --force to overwrite it\n`);
    expect(fs.existsSync(nodePath.join(dir, 'rig2.yaml'))).toBe(false);
    expect((await cli(['solve', session, '--out', rig, '--report', rig, '--force'])).err).toMatch(/output files must differ/);
    expect((await cli(['solve', session, '--out', rig, '--report', report, '--force', '--quiet'])).code).toBe(0);
  });

  test('on a terminal: progress for PnP and the iteration log go to stderr; --quiet silences them', async () => {
    const r = await cli(['solve', session, '--out', nodePath.join(dir, 'tty.yaml'), '--force'], true);
    expect(r.code).toBe(0);
    expect(r.err).toContain('PnP per view [');
    expect(r.err).toContain('100 %');
    expect(r.err).toMatch(/\[least squares\] +\d+ +cost /);
    expect(r.out).not.toContain('\r');
    const q = await cli(['solve', session, '--out', nodePath.join(dir, 'tty.yaml'), '--force', '--quiet'], true);
    expect(q.err).toBe('');
  });

  test('report RIG SESSION --out re-evaluates the session at the rig and writes the page', async () => {
    const rig = nodePath.join(dir, 'rig.yaml');
    if (!fs.existsSync(rig)) await cli(['solve', session, '--out', rig, '--quiet']);
    const out = nodePath.join(dir, 'eval.html');
    const r = await cli(['report', rig, session, '--out', out, '--title', 'Bench check']);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/^rig "stereo-bench" on session "stereo-bench": RMS 0\.\d+ px, sigma0 [\d.]+/);
    const html = fs.readFileSync(out, 'utf8');
    expect(html).toContain('<title>Bench check</title>');
    expect(html).toContain('re-evaluated at the extrinsics and intrinsics of');
    expect((await cli(['report', rig, session, '--out', out])).code).toBe(2);
    expect((await cli(['report', rig, session, '--out', out, '--force'])).code).toBe(0);
  });

  test('report with a rig that lacks a session camera exits 2 naming the camera', async () => {
    const rigText = fs.readFileSync(nodePath.join(dir, 'rig.yaml'), 'utf8');
    const other = nodePath.join(dir, 'renamed.yaml');
    fs.writeFileSync(other, rigText.replace(/name: right/, 'name: right_cam'));
    const r = await cli(['report', other, session, '--out', nodePath.join(dir, 'x.html')]);
    expect(r.code).toBe(2);
    expect(r.err).toContain('camera "right" of the session is not in the rig file');
    expect(fs.existsSync(nodePath.join(dir, 'x.html'))).toBe(false);
  });
});
