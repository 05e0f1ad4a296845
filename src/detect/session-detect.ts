/**
 * Detections for a session from its photos: finds each camera's view of the
 * session's checkerboard target(s) in PNG/JPEG files named by an image
 * pattern, and turns the corners into detections (formats.md columns
 * frame, camera, target, point, u, v).
 *
 * Image pattern syntax (our own): a file path with placeholders
 *   {camera}  replaced by each camera name of the session (required; may repeat)
 *   {frame}   matches any non-empty text inside one path segment (required, once);
 *             the matched text is the frame id, compared as text across cameras
 *   {target}  optional: replaced by each checkerboard target name, for sessions
 *             that photograph their targets separately
 * e.g. `photos/{camera}/{frame}.png`, `captures/{frame}/{camera}.jpg`,
 * `run1/{camera}_{frame}.jpeg`. Frames are discovered by listing, for each
 * camera, the files that match. Without {target}, every checkerboard target
 * is looked for in every image; targets with the same inner-corner count
 * then cannot be told apart and are refused.
 *
 * Frames are ordered naturally (`f2` before `f10`), rows by frame, then
 * camera and target in session order, then point id.
 */
import * as fs from 'node:fs';
import * as nodePath from 'node:path';
import { InputError, type InputIssue } from '../errors.js';
import type { DetectionTable, Session, TargetSpec } from '../io/types.js';
import type { CheckerboardFailureReason } from './checkerboard.js';
import { detectFiles, plannedWorkerCount, type DetectFilesOptions } from './workers.js';
import type { DetectJob } from './job.js';
import { emptyDetectionTable } from '../io/session.js';

/** Placeholders an image pattern may use. */
export const PATTERN_PLACEHOLDERS = ['camera', 'frame', 'target'] as const;

/** Why an image gave no board: the detector's reasons plus files that could not be read. */
export type NotFoundReason = CheckerboardFailureReason | 'unreadable';

/** What to do for each reason (mirrors the failure table of DETECTION.md). */
export const NOT_FOUND_ADVICE: Record<NotFoundReason, string> = {
  no_corners: 'too few corner candidates: check exposure and focus; squares must be at least ~14 px (20 px recommended)',
  no_grid: 'corners but no checker grid: check inner_corners (inner corners, not squares); avoid heavy blur and glare',
  wrong_size: 'a grid of another size: the board is partly outside the image or occluded, or inner_corners is wrong',
  colour_check: 'a grid without clearly alternating cells: strong glare or shadows on the board',
  unreadable: 'the file is not a readable PNG or JPEG',
};

/** One image file found for a camera. */
export interface PatternMatch {
  frame: string;
  file: string;
}

/** Problems with the pattern text itself (empty when it is well formed). */
export function checkImagePattern(pattern: string): string[] {
  const problems: string[] = [];
  if (!pattern.includes('{camera}')) problems.push('it has no {camera} placeholder');
  const frames = pattern.split('{frame}').length - 1;
  if (frames === 0) problems.push('it has no {frame} placeholder');
  if (frames > 1) problems.push('{frame} appears more than once');
  for (const m of pattern.matchAll(/\{([^{}]*)\}/g)) {
    if (!(PATTERN_PLACEHOLDERS as readonly string[]).includes(m[1]!)) problems.push(`unknown placeholder {${m[1]}} (use {camera}, {frame} and optionally {target})`);
  }
  return problems;
}

function escapeRegExp(s: string): string {
  return s.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
}

/** Natural order: digit runs compare as numbers (`f2` < `f10`). */
export function compareFrameIds(a: string, b: string): number {
  return a.localeCompare(b, 'en', { numeric: true });
}

/**
 * Lists the files matching `pattern` once {camera} and {target} are replaced
 * (the caller substitutes them). Returns the matches in natural frame order,
 * or the first folder that does not exist.
 */
export function listPatternFiles(concrete: string): { matches: PatternMatch[]; missingDir?: string } {
  const norm = nodePath.sep === '\\' ? concrete.replace(/\\/g, '/') : concrete;
  const segs = norm.split('/');
  const k = segs.findIndex((s) => s.includes('{frame}'));
  if (k < 0) return { matches: [] };
  const before = segs.slice(0, k);
  const dir = before.length === 0 ? '.' : before.join('/') === '' ? '/' : before.join('/');
  const seg = segs[k]!;
  const rest = segs.slice(k + 1);
  let names: fs.Dirent[];
  try {
    names = fs.readdirSync(dir, { withFileTypes: true });
  } catch {
    return { matches: [], missingDir: dir };
  }
  const [head, tail] = seg.split('{frame}') as [string, string];
  const re = new RegExp(`^${escapeRegExp(head)}(.+)${escapeRegExp(tail)}$`);
  const matches: PatternMatch[] = [];
  for (const d of names) {
    const m = re.exec(d.name);
    if (!m) continue;
    const file = nodePath.join(dir, d.name, ...rest);
    if (rest.length === 0 ? !(d.isFile() || d.isSymbolicLink()) : !fs.existsSync(file)) continue;
    if (rest.length === 0 && d.isSymbolicLink() && !fs.statSync(file, { throwIfNoEntry: false })?.isFile()) continue;
    matches.push({ frame: m[1]!, file });
  }
  matches.sort((a, b) => compareFrameIds(a.frame, b.frame));
  return { matches };
}

/** A board found in one image. */
export interface DetectedView {
  frame: string;
  camera: string;
  target: string;
  file: string;
  /** (u, v) per point id (id = row·columns + column), px. */
  cornersPx: Float64Array;
  /** The board's symmetry leaves its ids possibly turned by 180° (or 90°). */
  ambiguous180: boolean;
}

export interface CameraDetectionReport {
  camera: string;
  /** Image files read (or tried) for this camera. */
  images: number;
  /** Boards found (views). */
  found: number;
  /** Images without a board, by reason. */
  notFound: Partial<Record<NotFoundReason, number>>;
  /** First file per reason, for the report. */
  exampleFile: Partial<Record<NotFoundReason, string>>;
  /** Found views whose ids may be turned by 180° (or 90°). */
  ambiguous180: number;
}

export interface SessionDetection {
  /** The pattern as given (absolute or relative to the working directory). */
  pattern: string;
  views: DetectedView[];
  cameras: CameraDetectionReport[];
  /** Frame ids with at least one image, in natural order. */
  frames: string[];
  /** Total image files and boards found. */
  images: number;
  found: number;
  /** Worker threads used (0 = main thread). */
  workers: number;
  elapsedSeconds: number;
}

export interface SessionDetectOptions extends DetectFilesOptions {
  /** Image pattern (see the file comment); relative patterns are taken from the working directory. */
  pattern: string;
}

function checkerboards(session: Session): TargetSpec[] {
  return session.targets.filter((t) => t.kind === 'checkerboard');
}

/**
 * Finds the images of every camera and checks the pattern; throws InputError
 * (exit 2) naming the pattern and the camera when a camera has no image, the
 * pattern is malformed, or the targets cannot be told apart.
 */
export function planSessionDetection(session: Session, pattern: string): { jobs: DetectJob[]; meta: { camera: number; target: number; frame: string }[]; frames: string[] } {
  const issues: InputIssue[] = [];
  const problems = checkImagePattern(pattern);
  if (problems.length > 0) {
    throw new InputError(
      'detect.bad_pattern',
      problems.map((p) => ({ message: `image pattern "${pattern}": ${p}`, hint: 'write a path such as photos/{camera}/{frame}.png' })),
    );
  }
  const boards = checkerboards(session);
  if (boards.length === 0) {
    throw new InputError('detect.no_checkerboard', [
      { file: session.path, path: 'targets', message: 'the session has no checkerboard target; only checkerboards are detected in images', hint: 'add a target with kind: checkerboard' },
    ]);
  }
  const perTarget = pattern.includes('{target}');
  if (!perTarget) {
    for (let i = 0; i < boards.length; i++) {
      for (let j = i + 1; j < boards.length; j++) {
        const a = boards[i]!.innerCorners!, b = boards[j]!.innerCorners!;
        if ((a[0] === b[0] && a[1] === b[1]) || (a[0] === b[1] && a[1] === b[0])) {
          issues.push({
            file: session.path,
            path: 'targets',
            message: `targets "${boards[i]!.name}" and "${boards[j]!.name}" both have ${a[0]}x${a[1]} inner corners and cannot be told apart in one image`,
            hint: 'photograph them separately and put {target} in the image pattern',
          });
        }
      }
    }
  }
  const jobs: DetectJob[] = [];
  const meta: { camera: number; target: number; frame: string }[] = [];
  const frameSet = new Set<string>();
  session.cameras.forEach((cam, ci) => {
    let any = false;
    const missing: string[] = [];
    for (const board of boards) {
      if (!perTarget && board !== boards[0]) continue;
      const concrete = pattern.replaceAll('{camera}', cam.name).replaceAll('{target}', board.name);
      const { matches, missingDir } = listPatternFiles(concrete);
      if (matches.length === 0) missing.push(missingDir !== undefined ? `folder ${missingDir} does not exist` : `looked for ${concrete}`);
      for (const m of matches) {
        if (/[,"\r\n]/.test(m.frame)) {
          issues.push({ file: m.file, message: `frame id "${m.frame}" contains a comma, quote or line break`, hint: 'rename the file: frame ids are written to a CSV column' });
          continue;
        }
        any = true;
        frameSet.add(m.frame);
        const targets = perTarget ? [board] : boards;
        for (const t of targets) {
          jobs.push({ file: m.file, board: { columns: t.innerCorners![0], rows: t.innerCorners![1] } });
          meta.push({ camera: ci, target: session.targets.indexOf(t), frame: m.frame });
        }
      }
    }
    if (!any) {
      for (const where of missing) {
        issues.push({
          message: `no image for camera "${cam.name}" matches the pattern "${pattern}" (${where})`,
          hint: '{camera} is replaced by the camera name of the session and {frame} matches any text; check the folder and file names',
        });
      }
    }
  });
  if (issues.length > 0) throw new InputError('detect.no_images', issues);
  return { jobs, meta, frames: [...frameSet].sort(compareFrameIds) };
}

/** Detects the session's checkerboards in the images named by `opts.pattern` (parallel when compiled). */
export async function detectSession(session: Session, opts: SessionDetectOptions): Promise<SessionDetection> {
  const t0 = performance.now();
  const { jobs, meta, frames } = planSessionDetection(session, opts.pattern);
  const results = await detectFiles(jobs, opts);
  const reports: CameraDetectionReport[] = session.cameras.map((c) => ({ camera: c.name, images: 0, found: 0, notFound: {}, exampleFile: {}, ambiguous180: 0 }));
  const filesSeen = new Set<string>();
  const sizeIssues: InputIssue[] = [];
  const views: DetectedView[] = [];
  results.forEach((r, k) => {
    const m = meta[k]!;
    const cam = session.cameras[m.camera]!;
    const rep = reports[m.camera]!;
    if (!filesSeen.has(r.file)) {
      filesSeen.add(r.file);
      rep.images++;
    }
    const miss = (reason: NotFoundReason): void => {
      rep.notFound[reason] = (rep.notFound[reason] ?? 0) + 1;
      rep.exampleFile[reason] ??= r.file;
    };
    if (r.error || !r.result) return miss('unreadable');
    if (r.width !== cam.resolution[0] || r.height !== cam.resolution[1]) {
      if (sizeIssues.length < 20 && !sizeIssues.some((i) => i.message.includes(`camera "${cam.name}"`))) {
        sizeIssues.push({
          file: r.file,
          message: `image is ${r.width}x${r.height} but camera "${cam.name}" has resolution ${cam.resolution[0]}x${cam.resolution[1]}`,
          hint: 'check that {camera} picks this camera\'s images and that the session resolution is right',
        });
      }
      return;
    }
    if (!r.result.found) return miss(r.result.reason);
    rep.found++;
    if (r.result.ambiguous180) rep.ambiguous180++;
    views.push({ frame: m.frame, camera: cam.name, target: session.targets[m.target]!.name, file: r.file, cornersPx: r.result.corners, ambiguous180: r.result.ambiguous180 });
  });
  if (sizeIssues.length > 0) throw new InputError('detect.image_size', sizeIssues);
  const camOrder = new Map(session.cameras.map((c, i) => [c.name, i]));
  const tgtOrder = new Map(session.targets.map((t, i) => [t.name, i]));
  views.sort((a, b) => compareFrameIds(a.frame, b.frame) || camOrder.get(a.camera)! - camOrder.get(b.camera)! || tgtOrder.get(a.target)! - tgtOrder.get(b.target)!);
  return {
    pattern: opts.pattern,
    views,
    cameras: reports,
    frames,
    images: filesSeen.size,
    found: views.length,
    workers: plannedWorkerCount(jobs.length, opts),
    elapsedSeconds: (performance.now() - t0) / 1000,
  };
}

/** Detections CSV text (formats.md columns frame,camera,target,point,u,v; u, v to 1e-4 px). */
export function detectionsCsv(det: SessionDetection): string {
  const lines = ['frame,camera,target,point,u,v'];
  for (const v of det.views) {
    const n = v.cornersPx.length / 2;
    for (let i = 0; i < n; i++) lines.push(`${v.frame},${v.camera},${v.target},${i},${v.cornersPx[2 * i]!.toFixed(4)},${v.cornersPx[2 * i + 1]!.toFixed(4)}`);
  }
  return lines.join('\n') + '\n';
}

/** The session with the detected corners as its detections (frames in natural order). */
export function sessionWithDetections(session: Session, det: SessionDetection): Session {
  const count = det.views.reduce((s, v) => s + v.cornersPx.length / 2, 0);
  const table: DetectionTable = emptyDetectionTable(count);
  const frames = [...new Set(det.views.map((v) => v.frame))];
  const frameIndex = new Map(frames.map((f, i) => [f, i]));
  const camIndex = new Map(session.cameras.map((c, i) => [c.name, i]));
  const tgtIndex = new Map(session.targets.map((t, i) => [t.name, i]));
  let r = 0;
  for (const v of det.views) {
    const n = v.cornersPx.length / 2;
    for (let i = 0; i < n; i++, r++) {
      table.frame[r] = frameIndex.get(v.frame)!;
      table.camera[r] = camIndex.get(v.camera)!;
      table.target[r] = tgtIndex.get(v.target)!;
      table.point[r] = i;
      table.u[r] = v.cornersPx[2 * i]!;
      table.v[r] = v.cornersPx[2 * i + 1]!;
      // The line the row would have in the CSV that `detect` writes (header = line 1).
      table.line[r] = r + 2;
    }
  }
  return { ...session, frames, detections: table };
}

/** Per-camera report: images, boards found, misses by reason, 180° ambiguities. */
export function detectionReportLines(det: SessionDetection): string[] {
  const w = Math.max(6, ...det.cameras.map((c) => c.camera.length));
  const lines = [
    `detected ${det.found} board view${det.found === 1 ? '' : 's'} in ${det.images} image${det.images === 1 ? '' : 's'} (${det.frames.length} frames, ${det.elapsedSeconds.toFixed(1)} s, ${det.workers > 0 ? `${det.workers} worker threads` : 'main thread'})`,
    `  ${'camera'.padEnd(w)}  images  found  not found (by reason)                    ambiguous180`,
  ];
  for (const c of det.cameras) {
    const miss = Object.entries(c.notFound)
      .map(([reason, n]) => `${reason} ${n}`)
      .join(', ');
    lines.push(`  ${c.camera.padEnd(w)}  ${String(c.images).padStart(6)}  ${String(c.found).padStart(5)}  ${(miss || '-').padEnd(40)} ${String(c.ambiguous180).padStart(12)}`);
  }
  const ambiguous = det.cameras.reduce((s, c) => s + c.ambiguous180, 0);
  if (ambiguous > 0) {
    lines.push(
      `  ${ambiguous} view(s) of a board whose columns + rows is even: ids may be turned by 180° (the solver's flip rejection checks them); a board with columns + rows odd (e.g. 9x6) avoids this`,
    );
  }
  return lines;
}

/** Advice for every reason that occurred (all reasons when `det` is undefined), with an example file. */
export function notFoundAdviceLines(det?: SessionDetection): string[] {
  const seen = new Map<NotFoundReason, { n: number; file?: string }>();
  if (det) {
    for (const c of det.cameras) {
      for (const [reason, n] of Object.entries(c.notFound) as [NotFoundReason, number][]) {
        const s = seen.get(reason) ?? { n: 0, file: c.exampleFile[reason] };
        s.n += n;
        seen.set(reason, s);
      }
    }
  } else for (const r of Object.keys(NOT_FOUND_ADVICE) as NotFoundReason[]) seen.set(r, { n: 0 });
  return [...seen].map(([reason, s]) => `  ${reason}${s.n ? ` (${s.n} image${s.n === 1 ? '' : 's'}${s.file ? `, e.g. ${nodePath.relative(process.cwd(), s.file) || s.file}` : ''})` : ''}: ${NOT_FOUND_ADVICE[reason]}`);
}
