/**
 * Errors users see. Every error carries a stable `code` and the process exit
 * code the CLI maps it to. Input problems carry a list of issues, each naming
 * the file, the line or field path, what was expected and what was found.
 *
 * Exit codes (one place): 0 solved, 1 ran but failed, 2 invalid input,
 * 3 rig out of tolerance (`check`).
 */

export const EXIT_OK = 0;
export const EXIT_FAILED = 1;
export const EXIT_INVALID_INPUT = 2;
export const EXIT_OUT_OF_TOLERANCE = 3;

export interface InputIssue {
  /** File the problem is in (as the user named it), if any. */
  file?: string;
  /** 1-based line number, when known. */
  line?: number;
  /** Field path inside a structured file, e.g. `cameras[2].focal`. */
  path?: string;
  /** What went wrong, in plain words. */
  message: string;
  /** What the user can do about it. */
  hint?: string;
}

export class RigCalError extends Error {
  readonly code: string;
  readonly exitCode: number;
  constructor(code: string, message: string, exitCode: number = EXIT_FAILED) {
    super(message);
    this.name = 'RigCalError';
    this.code = code;
    this.exitCode = exitCode;
  }
}

/** Renders one issue as a single line: `file:line path: message → hint` (line breaks in the text are shown escaped). */
export function formatIssue(issue: InputIssue): string {
  let where = issue.file ?? '';
  if (issue.line !== undefined) where += `:${issue.line}`;
  if (issue.path) where += where ? ` ${issue.path}` : issue.path;
  const head = where ? `${where}: ` : '';
  // One line per issue, whatever text from the input ended up in the message.
  return `${head}${issue.message}${issue.hint ? ` → ${issue.hint}` : ''}`.replace(/\r\n|\r|\n/g, '\\n');
}

/** Invalid input (exit code 2). Collects every issue found, not just the first. */
export class InputError extends RigCalError {
  readonly issues: InputIssue[];
  /**
   * Number of issues found, which may exceed `issues.length` when a loader
   * stopped storing issues after a cap (a file with 500k bad rows).
   */
  readonly totalIssues: number;
  constructor(code: string, issues: InputIssue[], totalIssues: number = issues.length) {
    const total = Math.max(totalIssues, issues.length);
    const first = issues[0] ? formatIssue(issues[0]) : 'invalid input';
    const more = total > 1 ? ` (and ${total - 1} more)` : '';
    super(code, first + more, EXIT_INVALID_INPUT);
    this.name = 'InputError';
    this.issues = issues;
    this.totalIssues = total;
  }
}

/** Invalid options or command-line values (exit code 2). */
export class OptionsError extends RigCalError {
  constructor(code: string, message: string) {
    super(code, message, EXIT_INVALID_INPUT);
    this.name = 'OptionsError';
  }
}

/** A computation could not produce a trustworthy answer (exit code 1). */
export class NumericalError extends RigCalError {
  constructor(code: string, message: string) {
    super(code, message, EXIT_FAILED);
    this.name = 'NumericalError';
  }
}

/** Levenshtein distance, for "did you mean" suggestions. */
export function editDistance(a: string, b: string): number {
  const m = a.length;
  const n = b.length;
  let prev = new Array<number>(n + 1);
  let cur = new Array<number>(n + 1);
  for (let j = 0; j <= n; j++) prev[j] = j;
  for (let i = 1; i <= m; i++) {
    cur[0] = i;
    for (let j = 1; j <= n; j++) {
      const cost = a.charCodeAt(i - 1) === b.charCodeAt(j - 1) ? 0 : 1;
      cur[j] = Math.min(prev[j]! + 1, cur[j - 1]! + 1, prev[j - 1]! + cost);
    }
    [prev, cur] = [cur, prev];
  }
  return prev[n]!;
}

/** Returns the closest candidate within a small edit distance, if any. */
export function suggestSimilar(word: string, candidates: readonly string[]): string | undefined {
  let best: string | undefined;
  let bestD = Infinity;
  for (const c of candidates) {
    const d = editDistance(word.toLowerCase(), c.toLowerCase());
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  const limit = Math.max(2, Math.floor(word.length / 3));
  return bestD <= limit ? best : undefined;
}
