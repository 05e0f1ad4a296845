/**
 * The one place where errors become exit codes and stderr lines.
 * Exit codes (errors.ts): 0 ok, 1 ran but failed / unexpected error,
 * 2 invalid input or usage, 3 rig out of tolerance.
 */
import { CommanderError } from 'commander';
import { EXIT_FAILED, EXIT_INVALID_INPUT, EXIT_OK, formatIssue, InputError, RigCalError } from '../errors.js';
import type { CliContext } from './context.js';

/** Issues printed before "and N more". */
export const MAX_PRINTED_ISSUES = 20;

/** Exit code for any thrown value. */
export function exitCodeFor(err: unknown): number {
  if (err instanceof RigCalError) return err.exitCode;
  if (err instanceof CommanderError) {
    // Help and version requests are successes; any other commander error is a usage error.
    if (err.code === 'commander.helpDisplayed' || err.code === 'commander.version') return EXIT_OK;
    if (err.code === 'commander.help') return err.exitCode === 0 ? EXIT_OK : EXIT_INVALID_INPUT;
    return EXIT_INVALID_INPUT;
  }
  return EXIT_FAILED;
}

/** Prints an error as one `✖ ` line per issue (stack only with --verbose); returns the exit code. */
export function reportError(err: unknown, ctx: CliContext): number {
  const code = exitCodeFor(err);
  if (err instanceof CommanderError) return code; // commander already printed its message
  if (err instanceof InputError) {
    const shown = err.issues.slice(0, MAX_PRINTED_ISSUES);
    for (const issue of shown) ctx.err(`✖ ${formatIssue(issue)}`);
    const more = err.totalIssues - shown.length;
    if (more > 0) ctx.err(`✖ and ${more} more issue${more === 1 ? '' : 's'} (fix the ones above and run again)`);
    if (shown.length === 0) ctx.err(`✖ ${err.message}`);
  } else if (err instanceof RigCalError) {
    ctx.err(`✖ ${err.message}`);
  } else {
    const msg = err instanceof Error ? err.message.split('\n')[0] : String(err);
    ctx.err(`✖ unexpected error: ${msg}${ctx.verbose() ? '' : ' (run with --verbose for details)'}`);
  }
  if (ctx.verbose() && err instanceof Error && err.stack) ctx.err(err.stack);
  return code;
}
