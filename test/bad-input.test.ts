/**
 * Table-driven bad inputs through the in-process CLI (`rigsolve validate`):
 * each must exit with code 2, print only `✖ ` lines on stderr naming the
 * file:line (or field) and a next step, never a stack trace, and finish
 * within the test timeout (alias bombs and huge lines included).
 */
import * as fs from 'node:fs';
import * as path from 'node:path';
import { describe, expect, test } from 'vitest';
import { run } from '../src/cli/main.js';
import { rigFileToYaml } from '../src/io/rig-file.js';
import { makeTmpDir, VALID_CSV, VALID_SESSION, validRig, writeSessionFixture } from '../src/testing/io-fixtures.js';

interface Case {
  name: string;
  /** Session text (or bytes); defaults to VALID_SESSION. */
  session?: string | Uint8Array;
  /** Detections text (or bytes); defaults to VALID_CSV; null writes no file. */
  csv?: string | Uint8Array | null;
  /** Rig file text; when set, validate runs on the rig file instead. */
  rig?: string;
  /** Substring(s) every one of which must appear on stderr. */
  expect: (string | RegExp)[];
  /** `file:line` that must appear, file being session.yaml, detections.csv or rig.yaml. */
  at?: string;
}

const S = VALID_SESSION;
const C = VALID_CSV;
const rigText = rigFileToYaml(validRig());
const sub = (text: string, from: string | RegExp, to: string): string => {
  const out = text.replace(from, to);
  if (out === text) throw new Error(`fixture edit did not apply: ${String(from)}`);
  return out;
};
/** Adds a sigma column with the given cells (one per data row). */
const withSigma = (csv: string, cells: string[]): string =>
  csv
    .trimEnd()
    .split('\n')
    .map((l, k) => `${l},${k === 0 ? 'sigma' : cells[k - 1]}`)
    .join('\n') + '\n';
const lineOf = (text: string, needle: string): number => text.slice(0, text.indexOf(needle)).split('\n').length;

const aliasBomb = [
  'format: rig-session/1',
  'a: &a ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]',
  'b: &b [*a,*a,*a,*a,*a,*a,*a,*a,*a]',
  'c: &c [*b,*b,*b,*b,*b,*b,*b,*b,*b]',
  'd: &d [*c,*c,*c,*c,*c,*c,*c,*c,*c]',
  'e: &e [*d,*d,*d,*d,*d,*d,*d,*d,*d]',
  'f: &f [*e,*e,*e,*e,*e,*e,*e,*e,*e]',
  'g: &g [*f,*f,*f,*f,*f,*f,*f,*f,*f]',
  'h: &h [*g,*g,*g,*g,*g,*g,*g,*g,*g]',
  'i: &i [*h,*h,*h,*h,*h,*h,*h,*h,*h]',
  '',
].join('\n');

const cases: Case[] = [
  // ---- session: structure and types
  { name: 'missing format', session: sub(S, 'format: rig-session/1\n', ''), expect: ['missing required field "format"', 'format: rig-session/1'] },
  { name: 'unknown format version', session: sub(S, 'rig-session/1', 'rig-session/7'), expect: ['unknown format "rig-session/7"'], at: 'session.yaml:1' },
  { name: 'missing cameras', session: sub(S, /cameras:[\s\S]*?targets:/, 'targets:'), expect: ['missing required field "cameras"'] },
  { name: 'unknown top-level key', session: sub(S, 'scene: moving_targets', 'scenes: moving_targets'), expect: ['unknown key "scenes"', 'did you mean "scene"?'], at: `session.yaml:${lineOf(S, 'scene:')}` },
  { name: 'unknown camera key', session: sub(S, 'focal: [450.0, 450.0]', 'focal_length: [450.0, 450.0]'), expect: ['cameras[1].focal_length', 'did you mean "focal"?'], at: `session.yaml:${lineOf(S, 'focal: [450.0')}` },
  { name: 'focal of the wrong type', session: sub(S, 'focal: [450.0, 450.0]', 'focal: "450"'), expect: ['cameras[1].focal', 'expected a list, received "450"'], at: `session.yaml:${lineOf(S, 'focal: [450.0')}` },
  { name: 'negative focal', session: sub(S, 'focal: [500.0, 500.0]', 'focal: [-500.0, 500.0]'), expect: ['cameras[0].focal[0]', '> 0', 'received -500'], at: `session.yaml:${lineOf(S, 'focal: [500')}` },
  { name: 'zero resolution', session: sub(S, 'resolution: [640, 480]\n    model: pinhole', 'resolution: [0, 480]\n    model: pinhole'), expect: ['cameras[1].resolution[0]', 'received 0', 'width, height'] },
  { name: 'fractional resolution', session: sub(S, 'resolution: [640, 480]', 'resolution: [640.5, 480]'), expect: ['cameras[0].resolution[0]', 'expected an integer'] },
  { name: 'center outside the image', session: sub(S, 'center: [319.5, 239.5]', 'center: [700, 239.5]'), expect: ['cameras[0].center', 'outside the 640x480 image'], at: `session.yaml:${lineOf(S, 'center: [319.5')}` },
  { name: 'NaN focal', session: sub(S, 'focal: [500.0, 500.0]', 'focal: [.nan, 500.0]'), expect: ['cameras[0].focal[0]', 'finite number, received NaN'] },
  { name: 'Inf in target points', session: sub(S, '[0.5, 0.5, 0.1]', '[0.5, .inf, 0.1]'), expect: ['targets[1].points[3][1]', 'finite number, received Infinity'] },
  { name: 'pixel_sigma zero', session: sub(S, 'pixel_sigma: 0.5', 'pixel_sigma: 0'), expect: ['cameras[0].pixel_sigma', '> 0'], at: `session.yaml:${lineOf(S, 'pixel_sigma')}` },
  { name: 'unknown camera model', session: sub(S, 'model: brown-conrady', 'model: brown_conrady'), expect: ['cameras[0].model', 'did you mean "brown-conrady"?'] },
  { name: 'unknown target kind', session: sub(S, 'kind: checkerboard', 'kind: checkerbord'), expect: ['targets[0].kind', 'did you mean "checkerboard"?'] },
  { name: 'unknown scene', session: sub(S, 'scene: moving_targets', 'scene: moving'), expect: ['scene', 'moving_targets'] },
  { name: 'duplicate camera names', session: sub(S, 'name: cam_b', 'name: cam_a'), expect: ['duplicate camera name "cam_a"', 'unique'] },
  { name: 'duplicate target names', session: sub(S, 'name: pts', 'name: board'), expect: ['duplicate target name "board"'] },
  { name: 'reference camera not among cameras', session: sub(S, 'reference_camera: cam_a', 'reference_camera: cam_c'), expect: ['reference camera "cam_c" is not among the cameras', 'did you mean'], at: 'session.yaml:3' },
  { name: 'camera name with a space', session: sub(S, 'name: cam_b', 'name: "cam b"'), expect: ['cameras[1].name', 'not a valid name'] },
  { name: 'wrong distortion length', session: sub(S, 'distortion: [-0.1, 0.01, 0.0, 0.0, 0.0]', 'distortion: [-0.1, 0.01]'), expect: ['takes 5 distortion coefficient(s)', 'k1, k2, p1, p2, k3'] },
  { name: 'intrinsics omitted without solve_intrinsics', session: sub(S, '    focal: [450.0, 450.0]\n    center: [320.0, 240.0]\n', ''), expect: ['has no focal, center', 'solve_intrinsics: true'] },
  { name: 'fixed_intrinsics names an unknown parameter', session: sub(S, 'pixel_sigma: 0.5', 'pixel_sigma: 0.5\n    solve_intrinsics: true\n    fixed_intrinsics: [k3, k5]'), expect: ['fixed_intrinsics[1]', '"k5" is not a brown-conrady parameter'] },
  { name: 'checkerboard with one inner corner column', session: sub(S, 'inner_corners: [4, 3]', 'inner_corners: [1, 3]'), expect: ['targets[0].inner_corners[0]', '>= 2'] },
  // Found by fuzzing: a large count allocated gigabytes for the board's point table before any check.
  { name: 'checkerboard with 100000 x 100000 inner corners', session: sub(S, 'inner_corners: [4, 3]', 'inner_corners: [100000, 100000]'), expect: ['targets[0].inner_corners', 'at most 1,000,000'] },
  { name: 'negative square', session: sub(S, 'square: 0.05', 'square: -0.05'), expect: ['targets[0].square', '> 0'] },
  { name: 'points target with 3 points', session: sub(S, ', [0.5, 0.5, 0.1]]', ']'), expect: ['targets[1].points', 'at least 4'] },
  { name: 'YAML syntax error', session: sub(S, 'center: [320.0, 240.0]', 'center: [320.0, 240.0'), expect: ['YAML syntax'] },
  { name: 'duplicate YAML key', session: sub(S, 'scene: moving_targets', 'scene: moving_targets\nscene: fixed_targets'), expect: ['YAML syntax', 'unique'], at: `session.yaml:${lineOf(S, 'scene:') + 1}` },
  { name: 'alias bomb (billion laughs)', session: aliasBomb, expect: ['aliases expand too much'] },
  { name: 'alias without an anchor', session: sub(S, 'scene: moving_targets', 'scene: *nowhere'), expect: ['YAML syntax', 'nresolved alias', 'define the anchor'] },
  { name: 'non-UTF-8 bytes in the session', session: Buffer.concat([Buffer.from(S.slice(0, S.indexOf('name: test-rig'))), Buffer.from([0x6e, 0x61, 0x6d, 0x65, 0x3a, 0x20, 0xff, 0xfe, 0x0a]), Buffer.from(S.slice(S.indexOf('reference_camera')))]), expect: ['not valid UTF-8', 'save the file as UTF-8'], at: 'session.yaml:2' },
  { name: 'a list instead of a mapping', session: '- a\n- b\n', expect: ['expected a mapping of session fields'] },
  { name: 'detections file missing', csv: null, expect: ['detections.csv', 'not found', 'relative to the session file'], at: `session.yaml:${lineOf(S, 'detections:')}` },
  { name: 'JSON session with a negative square', session: JSON.stringify({ format: 'rig-session/1', reference_camera: 'cam_a', cameras: [{ name: 'cam_a', resolution: [640, 480], model: 'pinhole', focal: [500, 500], center: [320, 240] }, { name: 'cam_b', resolution: [640, 480], model: 'pinhole', focal: [500, 500], center: [320, 240] }], targets: [{ name: 'board', kind: 'checkerboard', inner_corners: [4, 3], square: -1 }, { name: 'pts', kind: 'points', points: [[0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 1, 0]] }], detections: 'detections.csv' }, null, 2), expect: ['targets[0].square', '> 0'] },
  // ---- detections
  { name: 'unknown camera in detections', csv: sub(C, 'f0,cam_b,board,0', 'f0,cam_c,board,0'), expect: ['camera "cam_c" is not in the session', 'did you mean'], at: 'detections.csv:4' },
  { name: 'unknown target in detections', csv: sub(C, 'f1,cam_a,pts', 'f1,cam_a,pst'), expect: ['target "pst" is not in the session', 'did you mean "pts"?'], at: 'detections.csv:5' },
  { name: 'point id not an integer', csv: sub(C, 'board,11,', 'board,3.5,'), expect: ['point id "3.5" is not a non-negative integer'], at: 'detections.csv:3' },
  { name: 'point id out of range', csv: sub(C, 'board,11,', 'board,12,'), expect: ['point id 12 is out of range for target "board" (ids 0..11)'], at: 'detections.csv:3' },
  { name: 'NaN u', csv: sub(C, '100.0,200.0', 'NaN,200.0'), expect: ['u = "NaN" is not a finite number'], at: 'detections.csv:2' },
  { name: 'Infinity v', csv: sub(C, '100.0,200.0', '100.0,Infinity'), expect: ['v = "Infinity" is not a finite number'], at: 'detections.csv:2' },
  { name: 'pixel outside the image', csv: sub(C, '639.5,479.5', '639.6,479.5'), expect: ['outside camera "cam_b"', '[-0.5, 639.5]'], at: 'detections.csv:6' },
  { name: 'sigma zero', csv: withSigma(C, ['1', '0', '', '1', '1', '1']), expect: ['sigma "0" must be a finite number > 0'], at: 'detections.csv:3' },
  { name: 'sigma negative', csv: withSigma(C, ['1', '1', '', '-2', '1', '1']), expect: ['sigma "-2" must be a finite number > 0'], at: 'detections.csv:5' },
  { name: 'duplicate detection row', csv: C + 'f0,cam_a,board,11,151,211\n', expect: ['duplicate detection', 'also appears on line 3'], at: 'detections.csv:8' },
  { name: 'wrong field count', csv: sub(C, 'f0,cam_b,board,0,300,100', 'f0,cam_b,board,0,300'), expect: ['expected 6 fields (as in the header), found 5'], at: 'detections.csv:4' },
  { name: 'extra column', csv: withSigma(C, ['1', '1', '1', '1', '1', '1']).replace('sigma', 'score'), expect: ['unknown column "score"', 'extra columns are not allowed'], at: 'detections.csv:1' },
  { name: 'missing column', csv: 'frame,camera,target,point,u\nf0,cam_a,board,0,1\n', expect: ['required column "v" is missing'] },
  { name: 'empty detections file', csv: '', expect: ['the detections file is empty'] },
  { name: 'header only', csv: 'frame,camera,target,point,u,v\r\n\r\n', expect: ['has a header but no rows'] },
  { name: 'camera with no detections', csv: C.split('\n').filter((l) => !l.includes('cam_b')).join('\n'), expect: ['camera "cam_b" has no detections', 'remove the camera from the session'], at: `session.yaml:${lineOf(S, '- name: cam_b')}` },
  { name: 'non-UTF-8 bytes in detections', csv: Buffer.concat([Buffer.from(C), Buffer.from([0x66, 0x32, 0xc3, 0x28, 0x0a])]), expect: ['not valid UTF-8'], at: 'detections.csv:8' },
  { name: 'unterminated quote', csv: C + '"f9,cam_a,board,1,1,1\n', expect: ['quoted field is never closed'], at: 'detections.csv:8' },
  // ---- rig files
  { name: 'rig: unknown format version', rig: sub(rigText, 'rig-calibration/1', 'rig-calibration/9'), expect: ['unknown format "rig-calibration/9"'], at: 'rig.yaml:1' },
  { name: 'rig: missing quality', rig: rigText.slice(0, rigText.indexOf('quality:')), expect: ['quality', 'missing required field'] },
  { name: 'rig: covariance with 35 numbers', rig: sub(rigText, 'covariance: [0, ', 'covariance: ['), expect: ['cameras[0].covariance', 'exactly 36'] },
  { name: 'rig: quaternion not unit', rig: sub(rigText, 'quaternion_wxyz: [1, 0, 0, 0]', 'quaternion_wxyz: [2, 0, 0, 0]'), expect: ['quaternion norm is 2'], at: `rig.yaml:${lineOf(rigText, 'quaternion_wxyz')}` },
  { name: 'rig: parent not the root', rig: sub(rigText, 'parent: cam_a', 'parent: cam_x'), expect: ['parent must be the root "cam_a"'] },
  { name: 'rig: NaN translation', rig: sub(rigText, 'translation: [0.1, ', 'translation: [.nan, '), expect: ['cameras[1].translation[0]', 'finite number'] },
  { name: 'rig: root not among cameras', rig: sub(rigText, 'root: cam_a', 'root: cam_z'), expect: ['root "cam_z" is not among the cameras'] },
];

async function runValidate(file: string): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await run(['validate', file], { stdout: (t) => (out += t), stderr: (t) => (err += t) });
  return { code, out, err };
}

describe('validate rejects bad input with exit code 2 and one-line located messages', () => {
  test('the table holds at least 30 cases', () => {
    expect(cases.length).toBeGreaterThanOrEqual(30);
  });

  test.each(cases.map((c) => [c.name, c] as const))('%s', { timeout: 20_000 }, async (_name, c) => {
    let file: string;
    if (c.rig !== undefined) {
      file = path.join(makeTmpDir(), 'rig.yaml');
      fs.writeFileSync(file, c.rig);
    } else {
      file = writeSessionFixture(c.session ?? S, c.csv === undefined ? C : c.csv);
    }
    const { code, out, err } = await runValidate(file);
    expect(code, err).toBe(2);
    expect(out).toBe('');
    const lines = err.trimEnd().split('\n');
    expect(lines.length).toBeGreaterThan(0);
    for (const l of lines) {
      expect(l.startsWith('✖ '), l).toBe(true);
      // Each issue names the file and a line or field, and a next step after the arrow.
      if (!l.startsWith('✖ and ')) {
        expect(l).toMatch(/(session\.yaml|detections\.csv|rig\.yaml)(:\d+)?/);
        expect(l, l).toContain(' → ');
      }
    }
    expect(err).not.toMatch(/\n\s+at /); // no stack trace
    for (const e of c.expect) {
      if (typeof e === 'string') expect(err, err).toContain(e);
      else expect(err, err).toMatch(e);
    }
    if (c.at) expect(err, err).toContain(c.at);
  });
});

describe('unusual but valid input loads', () => {
  test.each([
    ['CRLF line ends in the CSV', S, C.replace(/\n/g, '\r\n')],
    ['BOM at the start of the CSV and the session', '\uFEFF' + S, '\uFEFF' + C],
    ['quoted CSV fields with commas and doubled quotes', S, 'frame,"camera",target,point,u,v\n"f,0",cam_a,"board",0,100,200\n"say ""hi""",cam_a,board,1,1,2\nf0,"cam_b",board,0,"300","100"\nf2,cam_a,pts,3,1,1\nf2,cam_b,pts,3,1,1\n'],
    ['columns in another order, trailing blank lines', S, 'v,u,point,target,camera,frame\n200,100,0,board,cam_a,f0\n100,300,0,board,cam_b,f0\n\n\n'],
    ['a very long YAML line', sub(S, 'name: test-rig', `name: ${'x'.repeat(200_000)}`), C],
    ['a JSON session', JSON.stringify({ format: 'rig-session/1', reference_camera: 'cam_a', cameras: [{ name: 'cam_a', resolution: [640, 480], model: 'brown-conrady', solve_intrinsics: true }, { name: 'cam_b', resolution: [640, 480], model: 'pinhole', focal: [450, 450], center: [320, 240] }], targets: [{ name: 'board', kind: 'checkerboard', inner_corners: [4, 3], square: 0.05 }, { name: 'pts', kind: 'points', points: [[0, 0, 0], [0.5, 0, 0], [0, 0.5, 0], [0.5, 0.5, 0.1]] }], detections: 'detections.csv' }), C],
  ])('%s', async (_name, session, csv) => {
    const file = writeSessionFixture(session, csv);
    const { code, out, err } = await runValidate(file);
    expect(err).toBe('');
    expect(code).toBe(0);
    expect(out).toContain('is valid');
    expect(out).toMatch(/cam_a .* \d+ detections/);
  });

  test('quoted fields keep their text: frame ids with commas and quotes are distinct frames', async () => {
    const csv = 'frame,camera,target,point,u,v\n"f,0",cam_a,board,0,100,200\n"say ""hi""",cam_a,board,1,1,2\nf0,"cam_b",board,0,"300","100"\n';
    const file = writeSessionFixture(S, csv);
    const { loadSession } = await import('../src/io/session.js');
    const s = loadSession(file);
    expect(s.frames).toEqual(['f,0', 'say "hi"', 'f0']);
    expect(Array.from(s.detections.u)).toEqual([100, 1, 300]);
    expect(Array.from(s.detections.line)).toEqual([2, 3, 4]);
  });

  test('a valid rig file validates', async () => {
    const file = path.join(makeTmpDir(), 'rig.yaml');
    fs.writeFileSync(file, rigText);
    const { code, out } = await runValidate(file);
    expect(code).toBe(0);
    expect(out).toContain('rig "test-rig" is valid');
  });
});

/** Runs `rigsolve solve FILE --out rig.yaml` (beside the session) in-process. */
async function runSolve(file: string): Promise<{ code: number; out: string; err: string; outFile: string }> {
  let out = '';
  let err = '';
  const outFile = path.join(path.dirname(file), 'rig.yaml');
  const code = await run(['solve', file, '--out', outFile, '--quiet'], { stdout: (t) => (out += t), stderr: (t) => (err += t) });
  return { code, out, err, outFile };
}

/** The ✖-line contract shared by validate and solve. */
function expectLocatedLines(err: string): void {
  const lines = err.trimEnd().split('\n');
  expect(lines.length).toBeGreaterThan(0);
  for (const l of lines) {
    expect(l.startsWith('✖ '), l).toBe(true);
    if (!l.startsWith('✖ and ')) {
      expect(l).toMatch(/(session\.yaml|detections\.csv)(:\d+)?/);
      expect(l, l).toContain(' → ');
    }
  }
  expect(err).not.toMatch(/\n\s+at /);
  expect(err).not.toContain('unexpected error');
}

/** A representative subset of the catalogue: structure, types, names, numbers, bytes, CSV shape. */
const SOLVE_CASES = [
  'missing format',
  'unknown top-level key',
  'focal of the wrong type',
  'negative focal',
  'zero resolution',
  'NaN focal',
  'duplicate camera names',
  'reference camera not among cameras',
  'YAML syntax error',
  'alias bomb (billion laughs)',
  'non-UTF-8 bytes in the session',
  'detections file missing',
  'unknown camera in detections',
  'point id out of range',
  'NaN u',
  'pixel outside the image',
  'duplicate detection row',
  'wrong field count',
  'empty detections file',
  'camera with no detections',
  'non-UTF-8 bytes in detections',
  'unterminated quote',
];

const MB50 = 50 * 1024 * 1024;
const bigCases: Case[] = [
  {
    name: 'a 50 MB line in the detections (a frame id that never ends)',
    csv: `${C}f9,cam_a,board,0,1,${'7'.repeat(MB50)}x\n`,
    expect: ['is not a finite number'],
    at: 'detections.csv:8',
  },
  {
    name: 'a 50 MB line in the session (an unterminated quoted name)',
    session: sub(S, 'name: test-rig', `name: "${'x'.repeat(MB50)}`),
    expect: ['50.0 Mi characters long', 'unclosed quote'],
    at: 'session.yaml:2',
  },
];

describe('solve rejects bad input: exit code 2, no output file, no temp file, located one-line messages', () => {
  const byName = new Map(cases.map((c) => [c.name, c]));
  test('every listed case is in the catalogue', () => {
    for (const n of SOLVE_CASES) expect(byName.has(n), n).toBe(true);
  });

  test.each([...SOLVE_CASES.map((n) => [n, byName.get(n)!] as const), ...bigCases.map((c) => [c.name, c] as const)])(
    '%s',
    { timeout: 30_000 },
    async (_name, c) => {
      const file = writeSessionFixture(c.session ?? S, c.csv === undefined ? C : c.csv);
      const dir = path.dirname(file);
      const before = fs.readdirSync(dir).sort();
      const rssBefore = process.memoryUsage().rss;
      const { code, out, err, outFile } = await runSolve(file);
      const rssAfter = process.memoryUsage().rss;
      expect(code, err).toBe(2);
      expect(out).toBe('');
      expect(fs.existsSync(outFile)).toBe(false);
      // Nothing new in the folder: no rig file and no temporary file.
      expect(fs.readdirSync(dir).sort()).toEqual(before);
      expectLocatedLines(err);
      for (const e of c.expect) {
        if (typeof e === 'string') expect(err, err).toContain(e);
        else expect(err, err).toMatch(e);
      }
      if (c.at) expect(err, err).toContain(c.at);
      // Loose memory bound: the resident set grows by well under a gigabyte even for the 50 MB lines.
      expect(rssAfter - rssBefore).toBeLessThan(1024 * 1024 * 1024);
      // Messages stay short even when the input line is 50 MB long.
      expect(err.length).toBeLessThan(4000);
    },
  );
});
