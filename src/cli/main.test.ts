import { describe, expect, test } from 'vitest';
import type { Command } from 'commander';
import { InputError, NumericalError } from '../errors.js';
import { COMMANDS, run } from './main.js';
import type { CliContext } from './context.js';
import { writeSessionFixture } from '../testing/io-fixtures.js';

async function cli(argv: string[]) {
  let out = '';
  let err = '';
  const code = await run(argv, { stdout: (t) => (out += t), stderr: (t) => (err += t) });
  return { code, out, err };
}

/** Temporarily registers a command whose action runs `fn` (to exercise error mapping). */
async function withCommand(fn: (ctx: CliContext) => void, argv: string[]) {
  const reg = (program: Command, ctx: CliContext) => {
    program.command('boom').action(() => fn(ctx));
  };
  COMMANDS.push(reg);
  try {
    return await cli(argv);
  } finally {
    COMMANDS.splice(COMMANDS.indexOf(reg), 1);
  }
}

describe('rigsolve CLI (in-process)', () => {
  test('validate prints a summary of a valid session and exits 0', async () => {
    const file = writeSessionFixture();
    const { code, out, err } = await cli(['validate', file]);
    expect(err).toBe('');
    expect(code).toBe(0);
    expect(out).toContain('session "test-rig" is valid');
    expect(out).toMatch(/cam_a +brown-conrady 640x480 +3 detections/);
    expect(out).toMatch(/cam_b +pinhole 640x480 +3 detections/);
    expect(out).toContain('frames: 2');
    expect(out).toContain('detections: 6');
  });

  test('schema prints a JSON Schema', async () => {
    const { code, out } = await cli(['schema']);
    expect(code).toBe(0);
    const s = JSON.parse(out) as { properties: Record<string, unknown> };
    expect(Object.keys(s.properties)).toContain('reference_camera');
    const rig = await cli(['schema', 'rig']);
    expect(JSON.parse(rig.out).title).toContain('rig-calibration/1');
    expect((await cli(['schema', 'other'])).code).toBe(2);
  });

  test('help and version exit 0; no command, unknown commands and options exit 2 with one ✖ line', async () => {
    expect((await cli(['--help'])).code).toBe(0);
    const v = await cli(['--version']);
    expect(v.code).toBe(0);
    expect(v.out.trim()).toBe('0.1.0');
    expect((await cli([])).code).toBe(2);
    const bad = await cli(['valdate', 'x.yaml']);
    expect(bad.code).toBe(2);
    expect(bad.err.trimEnd().split('\n')).toHaveLength(1);
    expect(bad.err).toMatch(/^✖ unknown command 'valdate'.*validate/);
    expect((await cli(['validate'])).code).toBe(2);
    expect((await cli(['validate', 'a', '--frobnicate'])).code).toBe(2);
  });

  test('prints at most 20 issues and "and N more" counting every issue', async () => {
    const issues = Array.from({ length: 25 }, (_, k) => ({ file: 'x.csv', line: k + 2, message: `bad ${k}`, hint: 'fix it' }));
    const { code, err } = await withCommand(() => {
      throw new InputError('detections.invalid', issues, 5000);
    }, ['boom']);
    expect(code).toBe(2);
    const lines = err.trimEnd().split('\n');
    expect(lines).toHaveLength(21);
    expect(lines[0]).toBe('✖ x.csv:2: bad 0 → fix it');
    expect(lines[20]).toBe('✖ and 4980 more issues (fix the ones above and run again)');
  });

  test('RigCalError subclasses map to their exit codes', async () => {
    const r = await withCommand(() => {
      throw new NumericalError('solve.diverged', 'the solve diverged');
    }, ['boom']);
    expect(r.code).toBe(1);
    expect(r.err).toBe('✖ the solve diverged\n');
  });

  test('an action may set a non-zero exit code without throwing', async () => {
    const r = await withCommand((ctx) => {
      ctx.exitCode = 3;
    }, ['boom']);
    expect(r.code).toBe(3);
  });

  test('unexpected errors exit 1 with one line and no stack trace, unless --verbose', async () => {
    const boom = () => {
      throw new TypeError('x is undefined\nsecond line');
    };
    const quiet = await withCommand(boom, ['boom']);
    expect(quiet.code).toBe(1);
    expect(quiet.err).toBe('✖ unexpected error: x is undefined (run with --verbose for details)\n');
    const loud = await withCommand(boom, ['--verbose', 'boom']);
    expect(loud.code).toBe(1);
    expect(loud.err).toMatch(/\n\s+at /);
  });
});
