/**
 * `rigsolve detect SESSION.yaml --images PATTERN [--out detections.csv]`:
 * finds the session's checkerboard(s) in each camera's photos and writes the
 * detections CSV (formats.md) atomically. Per-camera report on stdout,
 * progress on stderr when it is a terminal (silenced by --quiet).
 * Exit 0 when at least one board was found, 1 when none was, 2 for bad input.
 * Also the in-memory detection step of `solve` when the session's
 * `detections:` is an image pattern (runImageDetection).
 */
import * as fs from 'node:fs';
import * as nodePath from 'node:path';
import type { Command } from 'commander';
import { loadSession } from '../io/session.js';
import { writeFileAtomic } from '../io/atomic.js';
import type { Session } from '../io/types.js';
import { detectionReportLines, detectionsCsv, detectSession, notFoundAdviceLines, type SessionDetection } from '../detect/session-detect.js';
import { EXIT_FAILED, OptionsError } from '../errors.js';
import type { CliContext } from './context.js';
import { parseNumber } from './simulate.js';

export const PATTERN_HELP =
  'PATTERN is a file path with placeholders: {camera} (required) is replaced by each camera name of the session; ' +
  '{frame} (required, once, inside one path segment) matches any text, and the matched text is the frame id shared ' +
  'by all cameras; {target} (optional) is replaced by each checkerboard target name when targets are photographed ' +
  "separately. Examples: 'photos/{camera}/{frame}.png', 'captures/{frame}/{camera}.jpg'. Quote the pattern in the " +
  'shell. On the command line it is relative to the working directory; in a session file, to the session file.';

/** Redraws one progress line on a terminal, at most ten times a second. */
function progressLine(ctx: CliContext, label: string): { update: (done: number, total: number) => void; clear: () => void } {
  let last = 0;
  let shown = false;
  return {
    update: (done, total) => {
      const now = performance.now();
      if (done < total && now - last < 100) return;
      last = now;
      shown = true;
      ctx.io.stderr(`\r${label}: ${done}/${total} images (${Math.round((100 * done) / Math.max(1, total))} %)\x1b[K`);
    },
    clear: () => {
      if (shown) ctx.io.stderr('\r\x1b[K');
    },
  };
}

/**
 * Runs detection for a session over `pattern`, showing progress when stderr
 * is a terminal and `quiet` is not set.
 */
export async function runImageDetection(session: Session, pattern: string, ctx: CliContext, o: { workers?: number; quiet?: boolean }): Promise<SessionDetection> {
  const progress = !o.quiet && ctx.io.stderrIsTTY ? progressLine(ctx, 'detecting') : undefined;
  try {
    return await detectSession(session, {
      pattern,
      ...(o.workers !== undefined ? { workers: o.workers } : {}),
      ...(progress ? { onProgress: (done: number, total: number) => progress.update(done, total) } : {}),
    });
  } finally {
    progress?.clear();
  }
}

/** The lines printed when no board at all was found. */
export function noBoardLines(det: SessionDetection): string[] {
  return [
    `✖ no checkerboard found in any of the ${det.images} images matching "${det.pattern}"`,
    '  what to do, by reason (see src/detect/DETECTION.md):',
    ...notFoundAdviceLines(det),
    '  only fully visible boards with exactly the inner_corners of the session are accepted (inner corners, not squares).',
  ];
}

export function registerDetect(program: Command, ctx: CliContext): void {
  program
    .command('detect')
    .summary("find the session's checkerboards in photos and write detections.csv")
    .description(
      "Find each camera's view of the session's checkerboard target(s) in PNG or JPEG photos, refine every corner " +
        'to sub-pixel accuracy, and write the detections CSV (columns frame,camera,target,point,u,v) atomically. ' +
        'Only fully visible boards with the declared inner_corners are accepted. ' +
        PATTERN_HELP +
        ' Without --images the session\'s detections: must be a pattern. Without --out the CSV goes where the ' +
        "session's detections: points (detections.csv beside the session when that is a pattern). " +
        'Exit codes: 0 at least one board found, 1 no board found, 2 invalid input (missing images, bad pattern).',
    )
    .argument('<session>', 'session file (YAML or JSON); its detections file need not exist yet')
    .option('--images <pattern>', "image pattern, e.g. 'photos/{camera}/{frame}.png'")
    .option('--out <detections.csv>', 'detections CSV to write')
    .option('--force', 'overwrite --out if it exists')
    .option('--workers <n>', 'worker threads (default: one per core)', parseNumber('--workers', { integer: true, min: 1 }))
    .option('--quiet', 'no progress indicator on stderr')
    .action(async (sessionPath: string, o: { images?: string; out?: string; force?: boolean; workers?: number; quiet?: boolean }) => {
      const session = loadSession(sessionPath, { detections: 'skip' });
      const pattern = o.images ?? session.detectionsPattern;
      if (pattern === undefined) {
        throw new OptionsError(
          'detect.no_pattern',
          `no image pattern: pass --images PATTERN (e.g. --images 'photos/{camera}/{frame}.png'), or write the pattern as detections: in ${sessionPath}`,
        );
      }
      const sessionCsv = session.detectionsPattern !== undefined ? nodePath.join(nodePath.dirname(session.path), 'detections.csv') : session.detectionsPath;
      const out = o.out !== undefined ? nodePath.resolve(o.out) : sessionCsv;
      if (!o.force && fs.existsSync(out)) {
        throw new OptionsError('output.exists', `${out} already exists; pass --force to overwrite it, or choose another --out`);
      }
      const det = await runImageDetection(session, pattern, ctx, o);
      for (const line of detectionReportLines(det)) ctx.out(line);
      if (det.found === 0) {
        for (const line of noBoardLines(det)) ctx.err(line);
        ctx.exitCode = EXIT_FAILED;
        return;
      }
      const missed = det.cameras.filter((c) => Object.keys(c.notFound).length > 0);
      if (missed.length > 0 && !o.quiet) {
        ctx.err('images without a board, by reason:');
        for (const line of notFoundAdviceLines(det)) ctx.err(line);
      }
      const silent = det.cameras.filter((c) => c.found === 0).map((c) => c.camera);
      if (silent.length > 0) ctx.err(`⚠ no board found for camera${silent.length === 1 ? '' : 's'} ${silent.join(', ')}: solve will not be able to place ${silent.length === 1 ? 'it' : 'them'}`);
      writeFileAtomic(out, detectionsCsv(det), { force: Boolean(o.force) });
      const rows = det.views.reduce((s, v) => s + v.cornersPx.length / 2, 0);
      ctx.out(`wrote ${rows} detections (${det.found} views) to ${out}`);
      if (session.detectionsPattern !== undefined) {
        ctx.out(`note: the session's detections: is an image pattern, so solve detects again; write detections: ${nodePath.relative(nodePath.dirname(session.path), out)} in it to solve from this file`);
      } else if (out !== nodePath.resolve(sessionCsv)) {
        ctx.out(`note: the session reads ${session.detectionsPath}; point its detections: at ${out} to solve with these`);
      }
    });
}
