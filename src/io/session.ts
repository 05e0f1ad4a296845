/**
 * Session loader (`format: rig-session/1`, formats.md). Reads the YAML (or
 * JSON) session and the detections CSV it names, checks everything, and
 * either returns a Session or throws one InputError listing every issue
 * found (file, line, field path, expected vs received, next step).
 *
 * Omitted intrinsics (allowed only with `solve_intrinsics: true`) are filled
 * with rough starting values and `intrinsicsGiven` is false:
 *   fx = fy = 0.8 · width   (about a 64° horizontal field of view; a starting
 *                            guess only, the solver initialises from data),
 *   cx = (width − 1)/2, cy = (height − 1)/2   (the image centre in the pixel
 *                            convention of formats.md: origin at the centre of
 *                            the top-left pixel),
 *   distortion = zeros.
 */
import * as nodePath from 'node:path';
import type { InputIssue } from '../errors.js';
import type { CameraModelName } from '../camera/model.js';
import type { CameraSpec, DetectionTable, Session, TargetSpec } from './types.js';
import { didYouMean, IssueCollector, describeValue } from './issues.js';
import { parseYaml, readTextFile, zodIssuesToInput, type YamlSource } from './yaml-source.js';
import {
  cameraSchema,
  MODEL_PARAM_NAMES,
  SESSION_FIELD_HELP,
  SESSION_FORMAT,
  sessionKnownKeys,
  sessionSchema,
  targetSchema,
  type CameraInput,
  type TargetInput,
} from './session-schema.js';
import { loadDetectionsCollect, type DetectionContext } from './detections.js';

/** Default starting focal length as a fraction of the image width (see the file comment). */
export const DEFAULT_FOCAL_PER_WIDTH = 0.8;

export interface CameraSpecWithProvenance extends CameraSpec {
  /** Which intrinsic groups were written in the session (the rest are defaults). */
  intrinsicsProvided?: { focal: boolean; center: boolean; distortion: boolean };
}

/** True when a session's `detections:` value is an image pattern (it contains `{camera}`), not a CSV path. */
export function isImagePattern(value: string): boolean {
  return value.includes('{camera}');
}

export interface SessionLoadOptions {
  /**
   * How to treat `detections:`:
   * - 'csv' (default): read and check the detections CSV; an image pattern is an issue;
   * - 'csv-or-images': as 'csv', but an image pattern is accepted: the session comes back with
   *   `detectionsPattern` set and no detections (the caller detects them, as `solve` does);
   * - 'skip': never read the detections (the file need not exist yet; `detect` writes it).
   * Sessions loaded without detections have an empty table and no frames.
   */
  detections?: 'csv' | 'csv-or-images' | 'skip';
}

/** Loads a session and its detections. Throws InputError with every issue found. */
export function loadSession(path: string, opts: SessionLoadOptions = {}): Session {
  const issues = new IssueCollector();
  const session = loadSessionCollect(path, issues, opts);
  issues.throwIfAny('session.invalid');
  return session!;
}

/** Like loadSession, but adds issues to `issues` and returns undefined on failure. */
export function loadSessionCollect(path: string, issues: IssueCollector, opts: SessionLoadOptions = {}): Session | undefined {
  const mode = opts.detections ?? 'csv';
  const f = readTextFile(path, issues, 'session');
  if (!f) return undefined;
  const src = parseYaml(path, f.text, issues);
  if (!src) return undefined;
  const data = src.data;
  if (data === null || typeof data !== 'object' || Array.isArray(data)) {
    issues.add({
      file: path,
      line: 1,
      message: `expected a mapping of session fields, found ${describeValue(data)}`,
      hint: `start the file with "format: ${SESSION_FORMAT}" followed by reference_camera, cameras, targets and detections`,
    });
    return undefined;
  }
  const raw = data as Record<string, unknown>;
  const before = issues.total;

  // Format first: a wrong format usually means a wrong file.
  const fmt = raw.format;
  let skipFormatIssue = false;
  if (fmt !== SESSION_FORMAT) {
    skipFormatIssue = true;
    const hint =
      typeof fmt === 'string' && fmt.startsWith('rig-calibration/')
        ? 'this is a rig (output) file; pass a session file instead'
        : typeof fmt === 'string' && fmt.startsWith('rig-session/')
          ? `this version of rigsolve reads ${SESSION_FORMAT}; convert the file or use a matching rigsolve version`
          : `add "format: ${SESSION_FORMAT}" at the top of the session file`;
    issues.add(
      src.issueAt(['format'], fmt === undefined ? 'missing required field "format"' : `unknown format ${describeValue(fmt)}, expected "${SESSION_FORMAT}"`, hint),
    );
    // Another format or version: its other fields would only produce noise.
    if (fmt !== undefined) return undefined;
  }

  const parsed = sessionSchema.safeParse(data, { reportInput: true });
  if (!parsed.success) {
    const zissues = parsed.error.issues.filter((zi) => !(skipFormatIssue && zi.path.length === 1 && zi.path[0] === 'format'));
    zodIssuesToInput(src, zissues, SESSION_FIELD_HELP, sessionKnownKeys, issues);
  }

  // Cross-field checks on every entry that is well formed on its own.
  const rawCameras = Array.isArray(raw.cameras) ? (raw.cameras as unknown[]) : [];
  const rawTargets = Array.isArray(raw.targets) ? (raw.targets as unknown[]) : [];
  const cameraInputs = rawCameras.map((rc) => cameraSchema.safeParse(rc));
  const cameras: (CameraSpecWithProvenance | undefined)[] = cameraInputs.map((r, i) =>
    r.success ? checkCamera(src, i, r.data, issues) : undefined,
  );
  const targets: (TargetSpec | undefined)[] = rawTargets.map((rt) => {
    const r = targetSchema.safeParse(rt);
    return r.success ? buildTarget(r.data) : undefined;
  });
  const cameraNames = rawCameras.map((c) => nameOf(c));
  const targetNames = rawTargets.map((t) => nameOf(t));
  checkDuplicates(src, 'cameras', cameraNames, issues);
  checkDuplicates(src, 'targets', targetNames, issues);

  const ref = raw.reference_camera;
  const validCameraNames = cameraNames.filter((n): n is string => n !== undefined);
  if (typeof ref === 'string' && rawCameras.length > 0 && !validCameraNames.includes(ref)) {
    issues.add(
      src.issueAt(['reference_camera'], `reference camera "${ref}" is not among the cameras`, didYouMean(ref, validCameraNames, 'a camera name:')),
    );
  }

  // Detections: loaded even when the session has issues, so that all problems are listed at once.
  let detectionsPath: string | undefined;
  let detectionsPattern: string | undefined;
  let loaded: ReturnType<typeof loadDetectionsCollect>;
  const pattern = typeof raw.detections === 'string' && isImagePattern(raw.detections);
  if (typeof raw.detections === 'string' && raw.detections !== '') {
    detectionsPath = nodePath.isAbsolute(raw.detections) ? raw.detections : nodePath.join(nodePath.dirname(path), raw.detections);
    if (pattern) detectionsPattern = detectionsPath;
  }
  if (pattern && mode === 'csv') {
    issues.add(
      src.issueAt(
        ['detections'],
        `detections "${String(raw.detections)}" is an image pattern, not a detections CSV`,
        'run "rigsolve detect SESSION" to write detections.csv from the images, or "rigsolve solve SESSION", which detects first',
      ),
    );
  } else if (pattern || mode === 'skip') {
    if (detectionsPath !== undefined) loaded = { table: emptyDetectionTable(), frames: [], perCamera: rawCameras.map(() => 0) };
  } else if (detectionsPath !== undefined && rawCameras.length > 0 && rawTargets.length > 0) {
    // Without cameras or targets every row would be "unknown"; those issues would only be noise.
    const ctx: DetectionContext = {
      cameras: rawCameras.map((_rc, i) => {
        // Well-formed cameras give their resolution (for the pixel bounds check) even if a cross-field rule failed.
        const r = cameraInputs[i]!;
        const where = { file: path, path: `cameras[${i}]`, line: src.lineOf(['cameras', i]) };
        return r.success ? { name: r.data.name, resolution: r.data.resolution, where } : { name: cameraNames[i] ?? `#${i}`, where };
      }),
      targets: rawTargets.map((_rt, i) => {
        const t = targets[i];
        return t ? { name: t.name, numPoints: t.numPoints } : { name: targetNames[i] ?? `#${i}` };
      }),
    };
    const probe = new IssueCollector();
    loaded = loadDetectionsCollect(detectionsPath, ctx, probe);
    // A missing detections file is reported against the session line that names it.
    for (const iss of probe.issues) {
      if (iss.file === detectionsPath && iss.line === undefined && iss.message.startsWith('detections file not found')) {
        issues.add(src.issueAt(['detections'], `detections file "${detectionsPath}" not found`, 'check the path; it is relative to the session file'));
      } else issues.add(iss);
    }
    issues.total += probe.total - probe.issues.length;
  }

  if (issues.total > before || !parsed.success || !loaded || detectionsPath === undefined) return undefined;
  const s = parsed.data;
  return {
    format: s.format,
    name: s.name ?? nodePath.basename(path).replace(/\.[^.]*$/, ''),
    path: nodePath.resolve(path),
    referenceCamera: s.reference_camera,
    cameras: cameras as CameraSpecWithProvenance[],
    targets: targets as TargetSpec[],
    scene: s.scene ?? 'moving_targets',
    detectionsPath: nodePath.resolve(detectionsPath),
    ...(detectionsPattern !== undefined ? { detectionsPattern: nodePath.resolve(detectionsPattern) } : {}),
    frames: loaded.frames,
    detections: loaded.table,
  };
}

/** A detection table with no rows. */
export function emptyDetectionTable(count = 0): DetectionTable {
  return {
    count,
    frame: new Int32Array(count),
    camera: new Int32Array(count),
    target: new Int32Array(count),
    point: new Int32Array(count),
    u: new Float64Array(count),
    v: new Float64Array(count),
    // NaN: the camera's pixel_sigma applies.
    sigma: new Float64Array(count).fill(NaN),
    line: new Int32Array(count),
  };
}

function nameOf(entry: unknown): string | undefined {
  if (entry && typeof entry === 'object' && typeof (entry as { name?: unknown }).name === 'string') {
    return (entry as { name: string }).name;
  }
  return undefined;
}

export function checkDuplicates(src: YamlSource, list: 'cameras' | 'targets', names: (string | undefined)[], issues: IssueCollector): void {
  const first = new Map<string, number>();
  names.forEach((n, i) => {
    if (n === undefined) return;
    const j = first.get(n);
    if (j === undefined) first.set(n, i);
    else {
      const line = src.lineOf([list, j, 'name']);
      issues.add(
        src.issueAt([list, i, 'name'], `duplicate ${list === 'cameras' ? 'camera' : 'target'} name "${n}" (also ${list}[${j}]${line ? ` on line ${line}` : ''})`, 'give each one a unique name'),
      );
    }
  });
}

/** Cross-field checks of one camera; returns its spec (defaults filled) when these pass. */
export function checkCamera(src: YamlSource, i: number, c: CameraInput, issues: IssueCollector): CameraSpecWithProvenance | undefined {
  const model = c.model as CameraModelName;
  const names = MODEL_PARAM_NAMES[model];
  const nd = names.length - 4;
  const [w, h] = c.resolution;
  const solve = c.solve_intrinsics ?? false;
  const at = (field: string | number, ...more: (string | number)[]) => ['cameras', i, field, ...more];
  let ok = true;
  const bad = (issue: InputIssue) => {
    issues.add(issue);
    ok = false;
  };

  if (c.distortion !== undefined && c.distortion.length !== nd) {
    bad(
      src.issueAt(
        at('distortion'),
        `model ${model} takes ${nd} distortion coefficient(s)${nd ? ` (${names.slice(4).join(' ')})` : ''}, received ${c.distortion.length}`,
        nd ? `write distortion: [${names.slice(4).join(', ')}]` : 'remove distortion (or write distortion: [])',
      ),
    );
  }
  if (c.center !== undefined) {
    const [cx, cy] = c.center;
    if (cx < -0.5 || cx > w - 0.5 || cy < -0.5 || cy > h - 0.5) {
      bad(
        src.issueAt(at('center'), `center (${cx}, ${cy}) is outside the ${w}x${h} image [-0.5, ${w - 0.5}] x [-0.5, ${h - 0.5}]`, `check center and resolution (the image centre is [${(w - 1) / 2}, ${(h - 1) / 2}])`),
      );
    }
  }
  const missing: string[] = [];
  if (c.focal === undefined) missing.push('focal: [fx, fy]');
  if (c.center === undefined) missing.push('center: [cx, cy]');
  if (c.distortion === undefined && nd > 0) missing.push(`distortion: [${names.slice(4).join(', ')}]`);
  if (missing.length && !solve) {
    bad(src.issueAt(['cameras', i], `camera "${c.name}" has no ${missing.map((m) => m.split(':')[0]).join(', ')} and solve_intrinsics is false`, `add ${missing.join(' and ')}, or set solve_intrinsics: true to estimate them`));
  }
  const fixed = c.fixed_intrinsics ?? [];
  const seenFixed = new Set<string>();
  fixed.forEach((p, k) => {
    if (!names.includes(p)) {
      bad(src.issueAt(at('fixed_intrinsics', k), `"${p}" is not a ${model} parameter (${names.join(' ')})`, didYouMean(p, names, 'a parameter name:')));
    } else if (seenFixed.has(p)) {
      bad(src.issueAt(at('fixed_intrinsics', k), `"${p}" is listed twice`, 'list each parameter once'));
    }
    seenFixed.add(p);
  });
  if (fixed.length && !solve) {
    bad(src.issueAt(at('fixed_intrinsics'), 'fixed_intrinsics has no effect while solve_intrinsics is false', 'set solve_intrinsics: true, or remove fixed_intrinsics'));
  }
  if (!ok) return undefined;

  const params = new Float64Array(names.length);
  params[0] = c.focal?.[0] ?? DEFAULT_FOCAL_PER_WIDTH * w;
  params[1] = c.focal?.[1] ?? DEFAULT_FOCAL_PER_WIDTH * w;
  params[2] = c.center?.[0] ?? (w - 1) / 2;
  params[3] = c.center?.[1] ?? (h - 1) / 2;
  if (c.distortion) params.set(c.distortion, 4);
  const provided = { focal: c.focal !== undefined, center: c.center !== undefined, distortion: c.distortion !== undefined || nd === 0 };
  return {
    name: c.name,
    resolution: [w, h],
    model,
    params,
    intrinsicsGiven: provided.focal && provided.center && provided.distortion,
    intrinsicsProvided: provided,
    solveIntrinsics: solve,
    fixedIntrinsics: [...fixed],
    pixelSigma: c.pixel_sigma ?? 1,
  };
}

/** Builds a target's point table. Checkerboard: id = row*columns + column at (column*square, row*square, 0). */
export function buildTarget(t: TargetInput): TargetSpec {
  if (t.kind === 'checkerboard') {
    const [cols, rows] = t.inner_corners;
    const n = cols * rows;
    const pts = new Float64Array(3 * n);
    for (let r = 0; r < rows; r++) {
      for (let c = 0; c < cols; c++) {
        const id = r * cols + c;
        pts[3 * id] = c * t.square;
        pts[3 * id + 1] = r * t.square;
        pts[3 * id + 2] = 0;
      }
    }
    return { name: t.name, kind: 'checkerboard', points: pts, numPoints: n, innerCorners: [cols, rows], square: t.square };
  }
  const pts = new Float64Array(3 * t.points.length);
  t.points.forEach((p, k) => pts.set(p, 3 * k));
  return { name: t.name, kind: 'points', points: pts, numPoints: t.points.length };
}
