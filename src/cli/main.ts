#!/usr/bin/env node
/**
 * rigsolve command line: commander wiring only. `run(argv, io)` parses the
 * arguments, runs one command and returns the exit code; the binary calls it
 * with the process's arguments and sinks. Tests call it in-process.
 */
import * as fs from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Command, CommanderError } from 'commander';
import { processIo, type CliContext, type CliIo, type RegisterCommand } from './context.js';
import { reportError } from './report-error.js';
import { registerSchema } from './schema.js';
import { registerValidate } from './validate.js';
import { registerSolve } from './solve.js';
import { registerSimulate } from './simulate.js';
import { registerReport } from './report.js';
import { registerCheck } from './check.js';
import { registerCompare } from './compare.js';
import { registerExport } from './export.js';
import { registerDetect } from './detect.js';

export const VERSION = '0.1.0';

/** Every command, one registration function each (src/cli/<command>.ts). */
export const COMMANDS: RegisterCommand[] = [
  registerSolve,
  registerDetect,
  registerCheck,
  registerCompare,
  registerExport,
  registerReport,
  registerSimulate,
  registerValidate,
  registerSchema,
];

/** Builds a fresh program bound to `ctx` (a new one per run: commander keeps state). */
export function createProgram(ctx: CliContext): Command {
  const program = new Command();
  program
    .name('rigsolve')
    .description('Calibrate the extrinsics of a multi-camera rig from a recorded target session.')
    .version(VERSION)
    .option('--verbose', 'print stack traces and extra detail')
    .exitOverride()
    .showSuggestionAfterError(true)
    .configureOutput({
      writeOut: (s) => ctx.io.stdout(s),
      writeErr: (s) => ctx.io.stderr(s),
      outputError: (s, write) => write(`✖ ${s.replace(/^error: /, '').trim().replace(/\s*\n\s*/g, ' ')}\n`),
    });
  for (const register of COMMANDS) register(program, ctx);
  return program;
}

/**
 * Runs the CLI on `argv` (user arguments only, e.g. ['validate', 's.yaml'])
 * and returns the exit code. Never calls process.exit and never throws.
 */
export async function run(argv: readonly string[], io: Partial<CliIo> = {}): Promise<number> {
  const sinks: CliIo = {
    stdout: io.stdout ?? processIo.stdout,
    stderr: io.stderr ?? processIo.stderr,
    // A caller-supplied stderr sink is not a terminal unless it says so.
    stderrIsTTY: io.stderrIsTTY ?? (io.stderr ? false : processIo.stderrIsTTY),
  };
  let program: Command | undefined;
  const ctx: CliContext = {
    io: sinks,
    out: (line) => sinks.stdout(`${line}\n`),
    err: (line) => sinks.stderr(`${line}\n`),
    verbose: () => (program?.opts().verbose as boolean | undefined) ?? argv.includes('--verbose'),
    exitCode: 0,
  };
  try {
    program = createProgram(ctx);
    await program.parseAsync([...argv], { from: 'user' });
    return ctx.exitCode;
  } catch (err) {
    if (err instanceof CommanderError && err.code === 'commander.executeSubCommandAsync') return 1;
    return reportError(err, ctx);
  }
}

function invokedAsScript(): boolean {
  const script = process.argv[1];
  if (!script) return false;
  try {
    return fs.realpathSync(script) === fs.realpathSync(fileURLToPath(import.meta.url));
  } catch {
    return false;
  }
}

if (invokedAsScript()) {
  // A closed pipe (`rigsolve schema | head`) is not an error.
  process.stdout.on('error', (e: NodeJS.ErrnoException) => {
    if (e.code === 'EPIPE') process.exit(process.exitCode ?? 0);
  });
  void run(process.argv.slice(2)).then((code) => {
    process.exitCode = code;
  });
}
