/**
 * Property tests (fast-check) over the input parsers: mutated and random
 * sessions and detections never crash the loader with anything but an
 * InputError carrying one-line issues, and never put a stack trace or an
 * "unexpected error" on the CLI's stderr.
 *
 * Runs per property: FUZZ_RUNS (default 60, a few seconds in `npm test`);
 * `npm run fuzz` sets a larger number.
 */
import * as fs from 'node:fs';
import * as path from 'node:path';
import fc from 'fast-check';
import { stringify } from 'yaml';
import { describe, expect, test } from 'vitest';
import { run } from '../src/cli/main.js';
import { InputError, formatIssue } from '../src/errors.js';
import { loadSession } from '../src/io/session.js';
import { makeTmpDir, VALID_CSV, VALID_SESSION } from '../src/testing/io-fixtures.js';

const RUNS = Number(process.env.FUZZ_RUNS ?? 60);
/** Fixed seed in `npm test` (reproducible CI); FUZZ_SEED overrides; a FUZZ_RUNS run draws a fresh seed and prints it. */
const FUZZ_SEED = process.env.FUZZ_SEED ? Number(process.env.FUZZ_SEED) : process.env.FUZZ_RUNS ? Date.now() % 2 ** 31 : 20261201;
if (process.env.FUZZ_RUNS) console.log(`${RUNS} runs per property, FUZZ_SEED=${FUZZ_SEED} (set it to replay this run)`);
const TIMEOUT = Math.max(30_000, RUNS * 500);

/** Tokens that stress the YAML and CSV readers and the schema. */
const NASTY = [
  '', ' ', '-', '[', ']', '{', '}', '"', "'", ',', ':', '&a', '*a', '!!str', '!!binary', '|', '>', '#', '---', '...', '?',
  'NaN', '.nan', '.inf', '-.inf', 'Infinity', '1e999', '-1', '0', '1e-320', '0x1F', '1_000', 'null', '~', 'true', 'yes',
  '\t', '\r', '\r\n', '\u0000', '\uFEFF', '\uD800', 'é', '😀', 'cam_a', 'cam_b', 'board', 'pts', 'pinhole', 'checkerboard',
  '[1, 2]', '[]', '{}', '[[0,0,0]]', '640', '480', '0.05', '1e308', '-0', 'rig-session/1', 'rig-calibration/1',
];
const token = fc.oneof(fc.constantFrom(...NASTY), fc.string({ maxLength: 8 }), fc.double().map(String), fc.integer().map(String));

type Mutation =
  | { op: 'delete'; at: number }
  | { op: 'duplicate'; at: number }
  | { op: 'swap'; at: number; with: number }
  | { op: 'replaceToken'; at: number; word: number; by: string }
  | { op: 'insert'; at: number; col: number; text: string }
  | { op: 'truncate'; at: number; col: number }
  | { op: 'indent'; at: number; by: number };

const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({ op: fc.constant('delete' as const), at: fc.nat() }),
  fc.record({ op: fc.constant('duplicate' as const), at: fc.nat() }),
  fc.record({ op: fc.constant('swap' as const), at: fc.nat(), with: fc.nat() }),
  fc.record({ op: fc.constant('replaceToken' as const), at: fc.nat(), word: fc.nat(), by: token }),
  fc.record({ op: fc.constant('insert' as const), at: fc.nat(), col: fc.nat(), text: token }),
  fc.record({ op: fc.constant('truncate' as const), at: fc.nat(), col: fc.nat() }),
  fc.record({ op: fc.constant('indent' as const), at: fc.nat(), by: fc.integer({ min: -4, max: 4 }) }),
);

/** Applies line-level mutations; tokens are split on spaces, commas and brackets. */
function mutate(text: string, muts: Mutation[]): string {
  const lines = text.split('\n');
  for (const m of muts) {
    if (lines.length === 0) lines.push('');
    const i = m.at % lines.length;
    const line = lines[i]!;
    switch (m.op) {
      case 'delete':
        lines.splice(i, 1);
        break;
      case 'duplicate':
        lines.splice(i, 0, line);
        break;
      case 'swap': {
        const j = m.with % lines.length;
        [lines[i], lines[j]] = [lines[j]!, line];
        break;
      }
      case 'replaceToken': {
        const parts = line.split(/([\s,[\]:]+)/);
        const words = parts.map((p, k) => (/^[\s,[\]:]*$/.test(p) ? -1 : k)).filter((k) => k >= 0);
        if (words.length) parts[words[m.word % words.length]!] = m.by;
        lines[i] = parts.join('');
        break;
      }
      case 'insert': {
        const c = m.col % (line.length + 1);
        lines[i] = line.slice(0, c) + m.text + line.slice(c);
        break;
      }
      case 'truncate':
        lines[i] = line.slice(0, m.col % (line.length + 1));
        break;
      case 'indent':
        lines[i] = m.by >= 0 ? ' '.repeat(m.by) + line : line.replace(new RegExp(`^ {0,${-m.by}}`), '');
        break;
    }
  }
  return lines.join('\n');
}

/** The loader's contract: a Session, or an InputError with one-line issues naming a file. */
function expectLoadContract(file: string): void {
  try {
    const s = loadSession(file);
    expect(s.detections.count).toBeGreaterThan(0);
    for (let i = 0; i < s.detections.count; i++) {
      expect(Number.isFinite(s.detections.u[i]!) && Number.isFinite(s.detections.v[i]!)).toBe(true);
    }
  } catch (e) {
    if (!(e instanceof InputError)) throw new Error(`loader threw ${(e as Error)?.constructor?.name}: ${(e as Error)?.stack ?? String(e)}`);
    expect(e.issues.length).toBeGreaterThan(0);
    for (const issue of e.issues) {
      const line = formatIssue(issue);
      expect(line, line).not.toContain('\n');
      expect(issue.file, line).toBeTruthy();
    }
  }
}

const dir = makeTmpDir('rigsolve-fuzz-');
function writeCase(session: string | Uint8Array, csv: string | Uint8Array): string {
  const file = path.join(dir, 'session.yaml');
  fs.writeFileSync(file, session);
  fs.writeFileSync(path.join(dir, 'detections.csv'), csv);
  return file;
}

describe('parser fuzzing', () => {
  test('mutated YAML sessions: a Session or an InputError, nothing else', { timeout: TIMEOUT }, () => {
    fc.assert(
      fc.property(fc.array(mutation, { minLength: 1, maxLength: 6 }), (muts) => {
        expectLoadContract(writeCase(mutate(VALID_SESSION, muts), VALID_CSV));
      }),
      { numRuns: RUNS, seed: FUZZ_SEED },
    );
  });

  test('mutated detections CSV: a Session or an InputError, nothing else', { timeout: TIMEOUT }, () => {
    fc.assert(
      fc.property(fc.array(mutation, { minLength: 1, maxLength: 6 }), fc.boolean(), (muts, crlf) => {
        const csv = mutate(VALID_CSV, muts);
        expectLoadContract(writeCase(VALID_SESSION, crlf ? csv.replace(/\n/g, '\r\n') : csv));
      }),
      { numRuns: RUNS, seed: FUZZ_SEED },
    );
  });

  test('structurally random sessions (any JSON value in any field), as YAML and as JSON', { timeout: TIMEOUT }, () => {
    const anyValue = fc.oneof({ depthSize: 'small' }, fc.jsonValue({ maxDepth: 2 }), fc.constantFrom<unknown>(NaN, Infinity, -0, 1e-320));
    const cam = fc.record(
      {
        name: fc.oneof(fc.constantFrom('cam_a', 'cam_b', 'cam a', ''), anyValue),
        resolution: fc.oneof(fc.tuple(fc.integer({ min: -2, max: 5000 }), fc.integer({ min: -2, max: 5000 })), anyValue),
        model: fc.oneof(fc.constantFrom('pinhole', 'brown-conrady', 'kannala-brandt', 'fisheye'), anyValue),
        focal: fc.oneof(fc.tuple(fc.double(), fc.double()), anyValue),
        center: fc.oneof(fc.tuple(fc.double({ min: -10, max: 700 }), fc.double({ min: -10, max: 500 })), anyValue),
        distortion: fc.oneof(fc.array(fc.double(), { maxLength: 6 }), anyValue),
        pixel_sigma: fc.oneof(fc.double(), anyValue),
        solve_intrinsics: fc.oneof(fc.boolean(), anyValue),
        fixed_intrinsics: fc.oneof(fc.array(fc.constantFrom('fx', 'k1', 'k9', 'p2'), { maxLength: 3 }), anyValue),
      },
      { requiredKeys: [] },
    );
    const target = fc.record(
      {
        name: fc.oneof(fc.constantFrom('board', 'pts'), anyValue),
        kind: fc.oneof(fc.constantFrom('checkerboard', 'points'), anyValue),
        inner_corners: fc.oneof(fc.tuple(fc.integer({ min: -1, max: 20 }), fc.integer({ min: -1, max: 20 })), anyValue),
        square: fc.oneof(fc.double(), anyValue),
        points: fc.oneof(fc.array(fc.array(fc.double(), { minLength: 2, maxLength: 4 }), { maxLength: 8 }), anyValue),
      },
      { requiredKeys: [] },
    );
    const session = fc.record(
      {
        format: fc.oneof(fc.constant('rig-session/1'), anyValue),
        name: anyValue,
        reference_camera: fc.oneof(fc.constantFrom('cam_a', 'cam_b', 'cam_c'), anyValue),
        cameras: fc.oneof(fc.array(cam, { maxLength: 3 }), anyValue),
        targets: fc.oneof(fc.array(target, { maxLength: 3 }), anyValue),
        scene: fc.oneof(fc.constantFrom('moving_targets', 'fixed_targets'), anyValue),
        detections: fc.oneof(fc.constant('detections.csv'), anyValue),
        extra: anyValue,
      },
      { requiredKeys: ['format', 'cameras', 'targets', 'detections'] },
    );
    fc.assert(
      fc.property(session, fc.boolean(), (obj, asJson) => {
        let text: string;
        try {
          text = asJson ? JSON.stringify(obj) ?? 'null' : stringify(obj);
        } catch {
          return; // not representable in that syntax: nothing to test
        }
        expectLoadContract(writeCase(text, VALID_CSV));
      }),
      { numRuns: RUNS, seed: FUZZ_SEED },
    );
  });

  test('arbitrary bytes as session and as detections', { timeout: TIMEOUT }, () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 400 }), fc.uint8Array({ maxLength: 400 }), (a, b) => {
        expectLoadContract(writeCase(a, VALID_CSV));
        expectLoadContract(writeCase(VALID_SESSION, Buffer.concat([Buffer.from('frame,camera,target,point,u,v\n'), b])));
      }),
      { numRuns: RUNS, seed: FUZZ_SEED },
    );
  });

  test('through the CLI: exit 0 or 2, only ✖ lines on stderr, never a stack trace or an unexpected error', { timeout: TIMEOUT }, async () => {
    await fc.assert(
      fc.asyncProperty(fc.array(mutation, { minLength: 1, maxLength: 5 }), fc.array(mutation, { maxLength: 3 }), async (ms, mc) => {
        const file = writeCase(mutate(VALID_SESSION, ms), mutate(VALID_CSV, mc));
        let out = '';
        let err = '';
        const code = await run(['validate', file], { stdout: (t) => (out += t), stderr: (t) => (err += t) });
        expect([0, 2], err).toContain(code);
        if (code === 2) {
          expect(out).toBe('');
          for (const l of err.trimEnd().split('\n')) expect(l.startsWith('✖ '), l).toBe(true);
        }
        expect(err).not.toContain('unexpected error');
        expect(err).not.toMatch(/\n\s+at /);
      }),
      { numRuns: Math.max(10, Math.round(RUNS / 2)), seed: FUZZ_SEED },
    );
  });
});
