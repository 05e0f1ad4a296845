/**
 * Detections CSV loader (formats.md "Detections"). RFC 4180 CSV with a header
 * line: columns frame, camera, target, point, u, v and optional sigma, in any
 * order. Handles a UTF-8 BOM, CRLF or LF line ends, quoted fields (commas,
 * doubled quotes and line breaks inside quotes) and blank lines.
 *
 * The scanner is hand written over the decoded string (one pass, no per-row
 * regular expressions) and fills column-oriented typed arrays directly.
 */
import type { InputIssue } from '../errors.js';
import type { DetectionTable } from './types.js';
import { describeValue, didYouMean, IssueCollector } from './issues.js';
import { readTextFile } from './yaml-source.js';

/** Where a session entry was defined, so issues can point at the session file. */
export interface SessionLocation {
  file: string;
  line?: number;
  path?: string;
}

/** What the loader needs to know about the session ("session-ish"). */
export interface DetectionContext {
  cameras: ReadonlyArray<{ name: string; resolution?: readonly [number, number]; where?: SessionLocation }>;
  targets: ReadonlyArray<{ name: string; numPoints?: number }>;
}

export interface LoadedDetections {
  table: DetectionTable;
  /** Distinct frame ids in order of first appearance; table.frame indexes this. */
  frames: string[];
  /** Detections per camera, indexed like context.cameras. */
  perCamera: number[];
}

export const REQUIRED_COLUMNS = ['frame', 'camera', 'target', 'point', 'u', 'v'] as const;
export const OPTIONAL_COLUMNS = ['sigma'] as const;
const ALL_COLUMNS: readonly string[] = [...REQUIRED_COLUMNS, ...OPTIONAL_COLUMNS];

const COMMA = 44;
const QUOTE = 34;
const LF = 10;
const CR = 13;

/** Loads and checks a detections CSV; throws InputError listing every issue. */
export function loadDetections(path: string, ctx: DetectionContext): LoadedDetections {
  const issues = new IssueCollector();
  const result = loadDetectionsCollect(path, ctx, issues);
  issues.throwIfAny('detections.invalid');
  return result!;
}

/** Like loadDetections, but adds issues to `issues` instead of throwing. */
export function loadDetectionsCollect(
  path: string,
  ctx: DetectionContext,
  issues: IssueCollector,
): LoadedDetections | undefined {
  const f = readTextFile(path, issues, 'detections');
  if (!f) return undefined;
  return parseDetections(f.text, path, ctx, issues);
}

/**
 * Parses detections CSV text. Every problem is added to `issues` (all rows are
 * checked); the returned table holds the rows that passed.
 */
export function parseDetections(
  text: string,
  file: string,
  ctx: DetectionContext,
  issues: IssueCollector,
): LoadedDetections {
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  const n = text.length;
  const total0 = issues.total;

  // Capacity: one row per line end at most.
  let cap = 1;
  for (let p = text.indexOf('\n'); p !== -1; p = text.indexOf('\n', p + 1)) cap++;

  const frameCol = new Int32Array(cap);
  const cameraCol = new Int32Array(cap);
  const targetCol = new Int32Array(cap);
  const pointCol = new Int32Array(cap);
  const uCol = new Float64Array(cap);
  const vCol = new Float64Array(cap);
  const sigmaCol = new Float64Array(cap);
  const lineCol = new Int32Array(cap);
  let count = 0;

  const cameraIndex = new Map<string, number>();
  ctx.cameras.forEach((c, i) => cameraIndex.set(c.name, i));
  const targetIndex = new Map<string, number>();
  ctx.targets.forEach((t, i) => targetIndex.set(t.name, i));
  const cameraNames = ctx.cameras.map((c) => c.name);
  const targetNames = ctx.targets.map((t) => t.name);
  const frameIndex = new Map<string, number>();
  const frames: string[] = [];
  const perCamera = new Array<number>(ctx.cameras.length).fill(0);

  let maxPoints = 1;
  for (const t of ctx.targets) if (t.numPoints !== undefined && t.numPoints > maxPoints) maxPoints = t.numPoints;
  // Point ids beyond any target are rejected before keying, so this stride is collision-free.
  const pointStride = ctx.targets.every((t) => t.numPoints !== undefined) ? maxPoints : 1 << 24;
  const seen = new Map<number, number>();
  const unknownCameraReported = new Set<string>();
  const unknownTargetReported = new Set<string>();

  const add = (line: number, message: string, hint?: string) => {
    const issue: InputIssue = { file, line, message };
    if (hint !== undefined) issue.hint = hint;
    issues.add(issue);
  };

  // Column position of each logical column in the record, -1 when absent.
  let colFrame = -1,
    colCamera = -1,
    colTarget = -1,
    colPoint = -1,
    colU = -1,
    colV = -1,
    colSigma = -1;
  let numColumns = 0;
  let headerSeen = false;
  let headerOk = false;

  const fields: string[] = [];
  let i = 0;
  let line = 1;
  while (i < n) {
    const recordLine = line;
    fields.length = 0;
    let quotedAny = false;
    // Scan one record.
    for (;;) {
      let field: string;
      if (text.charCodeAt(i) === QUOTE) {
        quotedAny = true;
        i++;
        let start = i;
        let buf = '';
        let closed = false;
        while (i < n) {
          const c = text.charCodeAt(i);
          if (c === QUOTE) {
            if (text.charCodeAt(i + 1) === QUOTE) {
              buf += text.slice(start, i + 1);
              i += 2;
              start = i;
              continue;
            }
            buf += text.slice(start, i);
            i++;
            closed = true;
            break;
          }
          if (c === LF) line++;
          i++;
        }
        if (!closed) {
          buf += text.slice(start, i);
          add(recordLine, 'a quoted field is never closed', 'add the closing double quote (write "" for a quote inside a field)');
        }
        field = buf;
        // Anything between the closing quote and the next separator is malformed.
        const s2 = i;
        while (i < n) {
          const c = text.charCodeAt(i);
          if (c === COMMA || c === LF || c === CR) break;
          i++;
        }
        if (i > s2) {
          add(line, `unexpected text ${describeValue(text.slice(s2, i))} after a closing quote`, 'quote the whole field, and write "" for a quote inside it');
        }
      } else {
        const start = i;
        while (i < n) {
          const c = text.charCodeAt(i);
          if (c === COMMA || c === LF || c === CR) break;
          i++;
        }
        field = text.slice(start, i);
      }
      fields.push(field);
      const c = text.charCodeAt(i);
      if (c === COMMA) {
        i++;
        continue;
      }
      if (c === CR) {
        i++;
        if (text.charCodeAt(i) === LF) i++;
        line++;
      } else if (c === LF) {
        i++;
        line++;
      }
      break;
    }

    // Blank (or whitespace-only) lines are ignored anywhere, including at the end.
    if (fields.length === 1 && !quotedAny && fields[0]!.trim() === '') continue;

    if (!headerSeen) {
      headerSeen = true;
      numColumns = fields.length;
      const seenCols = new Map<string, number>();
      let ok = true;
      fields.forEach((raw, k) => {
        const name = raw.trim();
        if (seenCols.has(name)) {
          add(recordLine, `column "${name}" appears twice in the header`, 'keep one column of each name');
          ok = false;
          return;
        }
        seenCols.set(name, k);
        if (!ALL_COLUMNS.includes(name)) {
          const lower = name.toLowerCase();
          const hint = ALL_COLUMNS.includes(lower)
            ? `column names are lower case: write "${lower}"`
            : `${didYouMean(name, ALL_COLUMNS, 'only the columns')}${name === '' ? '' : ' (extra columns are not allowed)'}`;
          add(recordLine, name === '' ? `header column ${k + 1} is empty` : `unknown column "${name}" in the header`, hint);
          ok = false;
        }
      });
      for (const req of REQUIRED_COLUMNS) {
        if (!seenCols.has(req)) {
          add(recordLine, `required column "${req}" is missing from the header`, `the header must name ${REQUIRED_COLUMNS.join(',')} (and optionally sigma), in any order`);
          ok = false;
        }
      }
      colFrame = seenCols.get('frame') ?? -1;
      colCamera = seenCols.get('camera') ?? -1;
      colTarget = seenCols.get('target') ?? -1;
      colPoint = seenCols.get('point') ?? -1;
      colU = seenCols.get('u') ?? -1;
      colV = seenCols.get('v') ?? -1;
      colSigma = seenCols.get('sigma') ?? -1;
      headerOk = ok;
      continue;
    }
    if (!headerOk) continue;

    if (fields.length !== numColumns) {
      add(recordLine, `expected ${numColumns} fields (as in the header), found ${fields.length}`, fields.length > numColumns ? 'remove the extra commas, or quote fields that contain commas' : 'fill in the missing fields');
      continue;
    }

    let rowOk = true;
    const frameId = fields[colFrame]!;
    if (frameId.trim() === '') {
      add(recordLine, 'frame id is empty', 'give every row a frame id');
      rowOk = false;
    }
    const camName = fields[colCamera]!;
    const cam = cameraIndex.get(camName);
    if (cam === undefined) {
      rowOk = false;
      if (!unknownCameraReported.has(camName)) {
        unknownCameraReported.add(camName);
        add(recordLine, `camera ${describeValue(camName)} is not in the session (first of its rows)`, didYouMean(camName, cameraNames, 'a camera from the session:'));
      } else issues.total++;
    }
    const tgtName = fields[colTarget]!;
    const tgt = targetIndex.get(tgtName);
    if (tgt === undefined) {
      rowOk = false;
      if (!unknownTargetReported.has(tgtName)) {
        unknownTargetReported.add(tgtName);
        add(recordLine, `target ${describeValue(tgtName)} is not in the session (first of its rows)`, didYouMean(tgtName, targetNames, 'a target from the session:'));
      } else issues.total++;
    }

    const pointStr = fields[colPoint]!;
    const point = parseIntField(pointStr);
    if (point === undefined) {
      add(recordLine, `point id ${describeValue(pointStr)} is not a non-negative integer`, 'point ids are integers: row*columns + column for checkerboards, the list index for point targets');
      rowOk = false;
    } else if (tgt !== undefined) {
      const np = ctx.targets[tgt]!.numPoints;
      if (np !== undefined && point >= np) {
        add(recordLine, `point id ${point} is out of range for target "${tgtName}" (ids 0..${np - 1})`, 'check the target definition (inner_corners counts inner corners, not squares) or the point ids');
        rowOk = false;
      }
    }

    const u = parseNumberField(fields[colU]!);
    const v = parseNumberField(fields[colV]!);
    if (!Number.isFinite(u) || !Number.isFinite(v)) {
      const bad = !Number.isFinite(u) ? `u = ${describeValue(fields[colU])}` : `v = ${describeValue(fields[colV])}`;
      add(recordLine, `${bad} is not a finite number`, 'write pixel positions as plain decimal numbers; drop rows without a detection');
      rowOk = false;
    } else if (cam !== undefined) {
      const res = ctx.cameras[cam]!.resolution;
      if (res && (u < -0.5 || u > res[0] - 0.5 || v < -0.5 || v > res[1] - 0.5)) {
        add(recordLine, `pixel (${u}, ${v}) is outside camera "${camName}"'s ${res[0]}x${res[1]} image [-0.5, ${res[0] - 0.5}] x [-0.5, ${res[1] - 0.5}]`, "check the camera's resolution in the session, and that u is the column and v the row");
        rowOk = false;
      }
    }

    let sigma = NaN;
    if (colSigma >= 0) {
      const s = fields[colSigma]!;
      if (s.trim() !== '') {
        sigma = parseNumberField(s);
        if (!(sigma > 0) || !Number.isFinite(sigma)) {
          add(recordLine, `sigma ${describeValue(s)} must be a finite number > 0 (px)`, "leave the cell empty to use the camera's pixel_sigma");
          rowOk = false;
        }
      }
    }

    if (!rowOk) continue;

    let f = frameIndex.get(frameId);
    if (f === undefined) {
      f = frames.length;
      frameIndex.set(frameId, f);
      frames.push(frameId);
    }
    const key = ((f * ctx.cameras.length + cam!) * ctx.targets.length + tgt!) * pointStride + point!;
    const prev = seen.get(key);
    if (prev !== undefined) {
      add(recordLine, `duplicate detection: frame ${describeValue(frameId)}, camera "${camName}", target "${tgtName}", point ${point} also appears on line ${prev}`, 'keep one detection per point per image');
      continue;
    }
    seen.set(key, recordLine);

    frameCol[count] = f;
    cameraCol[count] = cam!;
    targetCol[count] = tgt!;
    pointCol[count] = point!;
    uCol[count] = u;
    vCol[count] = v;
    sigmaCol[count] = sigma;
    lineCol[count] = recordLine;
    perCamera[cam!]!++;
    count++;
  }

  if (!headerSeen) {
    add(1, 'the detections file is empty', `write a header line (${REQUIRED_COLUMNS.join(',')}) followed by one row per detected point`);
  } else if (headerOk && count === 0 && issues.total === total0) {
    add(1, 'the detections file has a header but no rows', 'add one row per detected point');
  } else if (headerOk && issues.total === total0) {
    ctx.cameras.forEach((c, k) => {
      if (perCamera[k] === 0) {
        const issue: InputIssue = c.where
          ? { ...c.where, message: `camera "${c.name}" has no detections in ${file}` }
          : { file, message: `camera "${c.name}" from the session has no detections` };
        issue.hint = 'add its detections, or remove the camera from the session';
        issues.add(issue);
      }
    });
  }

  const table: DetectionTable = {
    count,
    frame: frameCol.slice(0, count),
    camera: cameraCol.slice(0, count),
    target: targetCol.slice(0, count),
    point: pointCol.slice(0, count),
    u: uCol.slice(0, count),
    v: vCol.slice(0, count),
    sigma: sigmaCol.slice(0, count),
    line: lineCol.slice(0, count),
  };
  return { table, frames, perCamera };
}

/** Non-negative integer (digits, optional surrounding spaces, or a float with zero fraction); undefined otherwise. */
function parseIntField(s: string): number | undefined {
  const n = s.length;
  let v = 0;
  let k = 0;
  if (n > 0 && n < 10) {
    for (; k < n; k++) {
      const c = s.charCodeAt(k) - 48;
      if (c < 0 || c > 9) break;
      v = v * 10 + c;
    }
    if (k === n) return v;
  }
  const t = s.trim();
  if (t === '') return undefined;
  const x = Number(t);
  return Number.isInteger(x) && x >= 0 && x <= 0x7fffffff ? x : undefined;
}

/** Decimal number; NaN for empty or malformed text (hex/binary forms rejected). */
function parseNumberField(s: string): number {
  const t = s.trim();
  if (t === '') return NaN;
  const c1 = t.charCodeAt(1);
  if (t.charCodeAt(0) === 48 && (c1 === 120 || c1 === 88 || c1 === 98 || c1 === 66 || c1 === 111 || c1 === 79)) return NaN;
  return Number(t);
}
