/**
 * What every CLI command receives: output sinks (injectable, so tests can run
 * the program in-process and capture what it prints) and the global flags.
 *
 * Adding a command: create src/cli/<command>.ts exporting
 *   export function register<Command>(program: Command, ctx: CliContext): void
 * that calls `program.command(...)…action(...)`, and add it to COMMANDS in
 * main.ts. Actions throw RigCalError subclasses for user-facing failures;
 * main.ts maps them to exit codes and prints them (never a stack trace unless
 * --verbose). An action that needs a non-zero exit without an error (e.g.
 * `check` out of tolerance) sets `ctx.exitCode`.
 */
import type { Command } from 'commander';

export interface CliIo {
  /** Receives text for stdout (callers include the newline). */
  stdout: (text: string) => void;
  /** Receives text for stderr (callers include the newline). */
  stderr: (text: string) => void;
  /** True when stderr is a terminal (progress indicators redraw one line); default false for injected sinks. */
  stderrIsTTY?: boolean;
}

export interface CliContext {
  io: CliIo;
  /** Writes one line to stdout. */
  out(line: string): void;
  /** Writes one line to stderr. */
  err(line: string): void;
  /** True when --verbose was given. */
  verbose(): boolean;
  /** Exit code to return when the action completes without throwing (default 0). */
  exitCode: number;
}

export type RegisterCommand = (program: Command, ctx: CliContext) => void;

/** Process sinks for the real binary. */
export const processIo: CliIo = {
  stdout: (t) => {
    process.stdout.write(t);
  },
  stderr: (t) => {
    process.stderr.write(t);
  },
};
