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

/** Largest detections file accepted, bytes (512 MiB, about 10M rows; below V8's string length limit). */
export const MAX_DETECTIONS_BYTES = 512 * 1024 * 1024;

export const REQUIRED_COLUMNS = ['frame', 'camera', 'target', 'point', 'u', 'v'] as const;
export const OPTIONAL_COLUMNS = ['sigma'] as const;
const ALL_COLUMNS: readonly string[] = [...REQUIRED_COLUMNS, ...OPTIONAL_COLUMNS];

const COMMA = 44;
const QUOTE = 34;
const LF = 10;
const CR = 13;

/** Loads and checks a detections CSV; throws InputError listing every issue. */
/** A column of session names (cameras or targets) and what parsing remembers about it. */
interface NameColumn {
  noun: 'camera' | 'target';
  names: string[];
  /** Name → index; with duplicate names (reported by the session loader) the first entry wins. */
  index: Map<string, number>;
  /** Unknown names already reported. */
  reported: Set<string>;
  /** Last name found, and its index (−1: none yet). */
  last: string;
  lastIdx: number;
}

function nameColumn(noun: 'camera' | 'target', names: string[]): NameColumn {
  const index = new Map<string, number>();
  names.forEach((n, i) => index.has(n) || index.set(n, i));
  return { noun, names, index, reported: new Set<string>(), last: '', lastIdx: -1 };
}

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
  const f = readTextFile(path, issues, 'detections', MAX_DETECTIONS_BYTES);
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

  const cameraColumn = nameColumn('camera', ctx.cameras.map((c) => c.name));
  const targetColumn = nameColumn('target', ctx.targets.map((t) => t.name));
  const frameIndex = new Map<string, number>();
  const frames: string[] = [];
  const perCamera = new Array<number>(ctx.cameras.length).fill(0);

  let maxPoints = 1;
  for (const t of ctx.targets) if (t.numPoints !== undefined && t.numPoints > maxPoints) maxPoints = t.numPoints;
  // Point ids beyond any target are rejected before keying, so this stride is collision-free.
  const pointStride = ctx.targets.every((t) => t.numPoints !== undefined) ? maxPoints : 1 << 24;
  // Duplicate check: one integer key per accepted row, sorted once at the end
  // (a hash table with 500k entries spends its time in cache misses).
  const keyCol = new Float64Array(cap);

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

  // Fields of the current record as [start, end) offsets into `text`; a quoted
  // field's unescaped text is kept in `quoted[k]` instead. Fields past
  // MAX_FIELDS are only counted (such a row is an error anyway).
  const MAX_FIELDS = 64;
  const fStart = new Int32Array(MAX_FIELDS);
  const fEnd = new Int32Array(MAX_FIELDS);
  const quoted: (string | undefined)[] = new Array<string | undefined>(MAX_FIELDS).fill(undefined);
  let nFields = 0;
  let anyQuoted = false;
  const field = (k: number): string => quoted[k] ?? text.slice(fStart[k]!, fEnd[k]!);

  // Last names seen: rows usually repeat the previous frame/camera/target,
  // and comparing in place avoids a substring and a hash lookup per row.
  let lastFrame = '';
  let lastFrameIdx = -1;

  /**
   * Index of the session name (camera, target) in column `col` of the current
   * record, or −1 when the session has no such name (reported once per name,
   * further rows only counted). The last name found is compared in place first.
   */
  const resolveName = (c: NameColumn, col: number, recordLine: number): number => {
    const s0 = fStart[col]!;
    const len = fEnd[col]! - s0;
    if (quoted[col] === undefined && c.lastIdx >= 0 && len === c.last.length && text.startsWith(c.last, s0)) return c.lastIdx;
    const name = field(col);
    const idx = c.index.get(name) ?? -1;
    if (idx < 0) {
      if (!c.reported.has(name)) {
        c.reported.add(name);
        add(recordLine, `${c.noun} ${describeValue(name)} is not in the session (first of its rows)`, didYouMean(name, c.names, `a ${c.noun} from the session:`));
      } else issues.total++;
    } else {
      c.last = name;
      c.lastIdx = idx;
    }
    return idx;
  };

  let i = 0;
  let line = 1;
  while (i < n) {
    const recordLine = line;
    if (anyQuoted) {
      quoted.fill(undefined);
      anyQuoted = false;
    }
    nFields = 0;
    // Scan one record.
    for (;;) {
      let s0: number;
      let e0: number;
      if (text.charCodeAt(i) === QUOTE) {
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
        if (nFields < MAX_FIELDS) {
          quoted[nFields] = buf;
          anyQuoted = true;
        }
        s0 = s2;
        e0 = s2;
      } else {
        s0 = i;
        while (i < n) {
          const c = text.charCodeAt(i);
          if (c === COMMA || c === LF || c === CR) break;
          i++;
        }
        e0 = i;
      }
      if (nFields < MAX_FIELDS) {
        fStart[nFields] = s0;
        fEnd[nFields] = e0;
      }
      nFields++;
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
    if (nFields === 1 && !anyQuoted && isBlank(text, fStart[0]!, fEnd[0]!)) continue;

    if (!headerSeen) {
      headerSeen = true;
      numColumns = nFields;
      const seenCols = new Map<string, number>();
      let ok = true;
      if (nFields > MAX_FIELDS) {
        add(recordLine, `the header has ${nFields} columns`, `the header must name ${REQUIRED_COLUMNS.join(',')} (and optionally sigma), in any order`);
        ok = false;
      }
      for (let k = 0; k < Math.min(nFields, MAX_FIELDS); k++) {
        const name = field(k).trim();
        if (seenCols.has(name)) {
          add(recordLine, `column ${describeValue(name)} appears twice in the header`, 'keep one column of each name');
          ok = false;
          continue;
        }
        seenCols.set(name, k);
        if (!ALL_COLUMNS.includes(name)) {
          const lower = name.toLowerCase();
          const hint = ALL_COLUMNS.includes(lower)
            ? `column names are lower case: write "${lower}"`
            : `${didYouMean(name, ALL_COLUMNS, 'only the columns')}${name === '' ? '' : ' (extra columns are not allowed)'}`;
          add(recordLine, name === '' ? `header column ${k + 1} is empty` : `unknown column ${describeValue(name)} in the header`, hint);
          ok = false;
        }
      }
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

    if (nFields !== numColumns) {
      add(recordLine, `expected ${numColumns} fields (as in the header), found ${nFields}`, nFields > numColumns ? 'remove the extra commas, or quote fields that contain commas' : 'fill in the missing fields');
      continue;
    }

    let rowOk = true;

    // Frame id (text).
    let f: number;
    let frameId: string;
    {
      const s0 = fStart[colFrame]!;
      const len = fEnd[colFrame]! - s0;
      if (quoted[colFrame] === undefined && lastFrameIdx >= 0 && len === lastFrame.length && text.startsWith(lastFrame, s0)) {
        frameId = lastFrame;
        f = lastFrameIdx;
      } else {
        frameId = field(colFrame);
        f = frameIndex.get(frameId) ?? -1;
        if (frameId.trim() === '') {
          add(recordLine, 'frame id is empty', 'give every row a frame id');
          rowOk = false;
        }
      }
    }

    // Camera and target.
    const cam = resolveName(cameraColumn, colCamera, recordLine);
    const tgt = resolveName(targetColumn, colTarget, recordLine);
    if (cam < 0 || tgt < 0) rowOk = false;

    // Point id.
    const point = quoted[colPoint] === undefined ? parseIntAt(text, fStart[colPoint]!, fEnd[colPoint]!) : parseIntField(quoted[colPoint]!);
    if (point < 0) {
      add(recordLine, `point id ${describeValue(field(colPoint))} is not a non-negative integer`, 'point ids are integers: row*columns + column for checkerboards, the list index for point targets');
      rowOk = false;
    } else if (tgt >= 0) {
      const np = ctx.targets[tgt]!.numPoints;
      if (np !== undefined && point >= np) {
        add(recordLine, `point id ${point} is out of range for target "${ctx.targets[tgt]!.name}" (ids 0..${np - 1})`, 'check the target definition (inner_corners counts inner corners, not squares) or the point ids');
        rowOk = false;
      }
    }

    // Pixel.
    const u = quoted[colU] === undefined ? parseNumberAt(text, fStart[colU]!, fEnd[colU]!) : parseNumberField(quoted[colU]!);
    const v = quoted[colV] === undefined ? parseNumberAt(text, fStart[colV]!, fEnd[colV]!) : parseNumberField(quoted[colV]!);
    if (!Number.isFinite(u) || !Number.isFinite(v)) {
      const bad = !Number.isFinite(u) ? `u = ${describeValue(field(colU))}` : `v = ${describeValue(field(colV))}`;
      add(recordLine, `${bad} is not a finite number`, 'write pixel positions as plain decimal numbers; drop rows without a detection');
      rowOk = false;
    } else if (cam >= 0) {
      const res = ctx.cameras[cam]!.resolution;
      if (res && (u < -0.5 || u > res[0] - 0.5 || v < -0.5 || v > res[1] - 0.5)) {
        add(recordLine, `pixel (${u}, ${v}) is outside camera "${ctx.cameras[cam]!.name}"'s ${res[0]}x${res[1]} image [-0.5, ${res[0] - 0.5}] x [-0.5, ${res[1] - 0.5}]`, "check the camera's resolution in the session, and that u is the column and v the row");
        rowOk = false;
      }
    }

    let sigma = NaN;
    if (colSigma >= 0) {
      const qs = quoted[colSigma];
      const blank = qs === undefined ? isBlank(text, fStart[colSigma]!, fEnd[colSigma]!) : qs.trim() === '';
      if (!blank) {
        sigma = qs === undefined ? parseNumberAt(text, fStart[colSigma]!, fEnd[colSigma]!) : parseNumberField(qs);
        if (!(sigma > 0) || !Number.isFinite(sigma)) {
          add(recordLine, `sigma ${describeValue(field(colSigma))} must be a finite number > 0 (px)`, "leave the cell empty to use the camera's pixel_sigma");
          rowOk = false;
        }
      }
    }

    if (!rowOk) continue;

    if (f < 0) {
      f = frames.length;
      frameIndex.set(frameId, f);
      frames.push(frameId);
    }
    lastFrame = frameId;
    lastFrameIdx = f;
    keyCol[count] = ((f * ctx.cameras.length + cam) * ctx.targets.length + tgt) * pointStride + point;
    frameCol[count] = f;
    cameraCol[count] = cam;
    targetCol[count] = tgt;
    pointCol[count] = point;
    uCol[count] = u;
    vCol[count] = v;
    sigmaCol[count] = sigma;
    lineCol[count] = recordLine;
    perCamera[cam]!++;
    count++;
  }

  count = reportDuplicates(
    keyCol.subarray(0, count),
    { frame: frameCol, camera: cameraCol, target: targetCol, point: pointCol, u: uCol, v: vCol, sigma: sigmaCol, line: lineCol },
    perCamera,
    frames,
    ctx,
    add,
  );

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

/** True when text[s, e) is empty or only spaces/tabs. */
function isBlank(text: string, s: number, e: number): boolean {
  for (let k = s; k < e; k++) {
    const c = text.charCodeAt(k);
    if (c !== 32 && c !== 9) return false;
  }
  return true;
}

/** Non-negative integer in text[s, e) (plain digits fast path); -1 when it is not one. */
function parseIntAt(text: string, s: number, e: number): number {
  if (e > s && e - s < 10) {
    let v = 0;
    let k = s;
    for (; k < e; k++) {
      const c = text.charCodeAt(k) - 48;
      if (c < 0 || c > 9) break;
      v = v * 10 + c;
    }
    if (k === e) return v;
  }
  return parseIntField(text.slice(s, e));
}

/** Non-negative integer (digits, optional surrounding spaces, or a float with zero fraction); -1 otherwise. */
function parseIntField(str: string): number {
  const t = str.trim();
  if (t === '') return -1;
  const x = Number(t);
  return Number.isInteger(x) && x >= 0 && x <= 0x7fffffff ? x : -1;
}

/** Exact powers of ten (every 10^k with k <= 22 is a double). */
const POW10 = Array.from({ length: 23 }, (_, k) => 10 ** k);

/**
 * Decimal number in text[s, e). Fast path for `[-+]digits[.digits]` with at
 * most 15 significant digits: m / 10^k with m < 2^53 and 10^k exact is the
 * correctly rounded value (one IEEE division), i.e. exactly what Number()
 * returns. Everything else goes through Number().
 */
function parseNumberAt(text: string, s: number, e: number): number {
  let k = s;
  let neg = false;
  const c0 = text.charCodeAt(k);
  if (c0 === 45 || c0 === 43) {
    neg = c0 === 45;
    k++;
  }
  let m = 0;
  let digits = 0;
  let frac = -1;
  let ok = k < e;
  for (; k < e; k++) {
    const c = text.charCodeAt(k);
    if (c >= 48 && c <= 57) {
      m = m * 10 + (c - 48);
      digits++;
      if (frac >= 0) frac++;
    } else if (c === 46 && frac < 0) {
      frac = 0;
    } else {
      ok = false;
      break;
    }
  }
  if (ok && digits > 0 && digits <= 15) {
    const x = frac > 0 ? m / POW10[frac]! : m;
    return neg ? -x : x;
  }
  return parseNumberField(text.slice(s, e));
}

/** Decimal number; NaN for empty or malformed text (hex/binary/octal forms rejected). */
function parseNumberField(s: string): number {
  if (s.length === 0) return NaN;
  const x = Number(s); // Number() itself ignores surrounding white space
  // Blank text reads as 0 and "0x10" as 16: only integer results need the slower look.
  if (Number.isInteger(x)) {
    const t = s.trim();
    if (t === '') return NaN;
    const c1 = t.charCodeAt(1);
    if (t.charCodeAt(0) === 48 && (c1 === 120 || c1 === 88 || c1 === 98 || c1 === 66 || c1 === 111 || c1 === 79)) return NaN;
  }
  return x;
}

/**
 * Finds rows with the same (frame, camera, target, point) key. Sorting a copy
 * of the keys detects whether any exist; only then a Map pass names both
 * lines of each duplicate. Later duplicates are removed from the columns
 * (compacted in place); returns the new row count.
 */
function reportDuplicates(
  keys: Float64Array,
  cols: Omit<DetectionTable, 'count'>,
  perCamera: number[],
  frames: string[],
  ctx: DetectionContext,
  add: (line: number, message: string, hint?: string) => void,
): number {
  const count = keys.length;
  const sorted = keys.slice().sort();
  let any = false;
  for (let k = 1; k < count; k++) {
    if (sorted[k] === sorted[k - 1]) {
      any = true;
      break;
    }
  }
  if (!any) return count;
  const first = new Map<number, number>();
  let w = 0;
  for (let r = 0; r < count; r++) {
    const prev = first.get(keys[r]!);
    if (prev !== undefined) {
      perCamera[cols.camera[r]!]!--;
      add(
        cols.line[r]!,
        `duplicate detection: frame ${describeValue(frames[cols.frame[r]!])}, camera "${ctx.cameras[cols.camera[r]!]!.name}", target "${ctx.targets[cols.target[r]!]!.name}", point ${cols.point[r]} also appears on line ${prev}`,
        'keep one detection per point per image',
      );
      continue;
    }
    first.set(keys[r]!, cols.line[r]!);
    for (const c of [cols.frame, cols.camera, cols.target, cols.point, cols.u, cols.v, cols.sigma, cols.line]) c[w] = c[r]!;
    w++;
  }
  return w;
}
