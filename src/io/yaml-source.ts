/**
 * Reading a YAML (or JSON) input file safely and mapping field paths back to
 * source lines.
 *
 * Safety limits: files larger than MAX_INPUT_BYTES are refused before being
 * read; bytes that are not UTF-8 are reported with their line; YAML aliases
 * are expanded at most MAX_ALIAS_COUNT times (an alias bomb such as the
 * "billion laughs" document stops there instead of exhausting memory).
 */
import * as fs from 'node:fs';
import {
  isMap,
  isScalar,
  isSeq,
  LineCounter,
  parseDocument,
  type Document,
  type Node as YamlNode,
} from 'yaml';
import type { z } from 'zod';
import type { InputIssue } from '../errors.js';
import { describeValue, didYouMean, IssueCollector, pathToString } from './issues.js';

/** Largest input file accepted, bytes (64 MiB). */
export const MAX_INPUT_BYTES = 64 * 1024 * 1024;
/** Largest number of alias expansions while converting a YAML document. */
export const MAX_ALIAS_COUNT = 1000;
/**
 * Longest line accepted in a YAML/JSON file, characters (1 Mi). The YAML
 * parser spends about a quarter of a second per megabyte inside one quoted
 * scalar, so a runaway line (an unclosed quote, a binary file) is reported
 * before parsing instead of taking tens of seconds and gigabytes.
 */
export const MAX_YAML_LINE_CHARS = 1024 * 1024;

export interface TextFile {
  /** The path as given by the caller (used in messages). */
  file: string;
  text: string;
}

/**
 * Reads a file as UTF-8 text. Issues (missing, too large, not UTF-8) are added
 * to `issues` and `undefined` is returned. A leading BOM is removed.
 */
export function readTextFile(
  path: string,
  issues: IssueCollector,
  what: string,
  maxBytes = MAX_INPUT_BYTES,
): TextFile | undefined {
  let size: number;
  try {
    const st = fs.statSync(path);
    if (st.isDirectory()) {
      issues.add({ file: path, message: `${what} path is a directory, not a file`, hint: `name the ${what} file itself` });
      return undefined;
    }
    size = st.size;
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    issues.add({
      file: path,
      message: code === 'ENOENT' ? `${what} file not found` : `cannot read ${what} file (${code ?? String(e)})`,
      hint: code === 'ENOENT' ? 'check the path (relative paths inside a session are relative to the session file)' : 'check the file permissions',
    });
    return undefined;
  }
  if (size > maxBytes) {
    issues.add({
      file: path,
      message: `${what} file is ${(size / 1048576).toFixed(1)} MiB, larger than the ${(maxBytes / 1048576).toFixed(0)} MiB limit`,
      hint: 'split the input or check that this is the right file',
    });
    return undefined;
  }
  const bytes = fs.readFileSync(path);
  let text: string;
  try {
    text = new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    const offset = firstInvalidUtf8Offset(bytes);
    let line = 1;
    for (let i = 0; i < offset; i++) if (bytes[i] === 0x0a) line++;
    issues.add({
      file: path,
      line,
      message: `byte ${offset} (0x${(bytes[offset] ?? 0).toString(16).padStart(2, '0')}) is not valid UTF-8`,
      hint: 'save the file as UTF-8',
    });
    return undefined;
  }
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  return { file: path, text };
}

/** Offset of the first byte that breaks UTF-8 well-formedness (RFC 3629), or bytes.length. */
export function firstInvalidUtf8Offset(bytes: Uint8Array): number {
  const n = bytes.length;
  let i = 0;
  while (i < n) {
    const b = bytes[i]!;
    if (b < 0x80) {
      i++;
      continue;
    }
    let need: number;
    let lo = 0x80;
    let hi = 0xbf;
    if (b >= 0xc2 && b <= 0xdf) need = 1;
    else if (b >= 0xe0 && b <= 0xef) {
      need = 2;
      if (b === 0xe0) lo = 0xa0;
      if (b === 0xed) hi = 0x9f;
    } else if (b >= 0xf0 && b <= 0xf4) {
      need = 3;
      if (b === 0xf0) lo = 0x90;
      if (b === 0xf4) hi = 0x8f;
    } else return i;
    for (let k = 1; k <= need; k++) {
      const c = bytes[i + k];
      if (c === undefined) return i;
      const l = k === 1 ? lo : 0x80;
      const h = k === 1 ? hi : 0xbf;
      if (c < l || c > h) return i;
    }
    i += need + 1;
  }
  return n;
}

/** A parsed YAML file with positions. */
export class YamlSource {
  constructor(
    readonly file: string,
    readonly doc: Document,
    readonly lineCounter: LineCounter,
    /** The plain data (undefined when parsing failed). */
    readonly data: unknown,
  ) {}

  /** 1-based line of the node at `path`, or of its nearest existing ancestor. */
  lineOf(path: readonly PropertyKey[]): number | undefined {
    for (let k = path.length; k >= 0; k--) {
      const node = this.nodeAt(path.slice(0, k));
      if (node?.range) return this.lineCounter.linePos(node.range[0]).line;
    }
    return undefined;
  }

  /** 1-based line of the key `key` inside the mapping at `path`. */
  lineOfKey(path: readonly PropertyKey[], key: string): number | undefined {
    const map = this.nodeAt(path);
    if (isMap(map)) {
      for (const pair of map.items) {
        const k = pair.key;
        if (isScalar(k) && String(k.value) === key && k.range) return this.lineCounter.linePos(k.range[0]).line;
      }
    }
    return this.lineOf(path);
  }

  private nodeAt(path: readonly PropertyKey[]): YamlNode | undefined {
    let node: unknown = this.doc.contents;
    for (const p of path) {
      if (isMap(node)) {
        const pair = node.items.find((it) => isScalar(it.key) && String(it.key.value) === String(p));
        node = pair?.value;
      } else if (isSeq(node) && typeof p === 'number') {
        node = node.items[p];
      } else return undefined;
      if (node === undefined || node === null) return undefined;
    }
    return node as YamlNode;
  }

  /** Builds an issue for a field path, with the line filled in. */
  issueAt(path: readonly PropertyKey[], message: string, hint?: string): InputIssue {
    const issue: InputIssue = { file: this.file, path: pathToString(path), message };
    const line = this.lineOf(path);
    if (line !== undefined) issue.line = line;
    if (hint !== undefined) issue.hint = hint;
    return issue;
  }
}

/**
 * Parses YAML text into a YamlSource. Syntax errors, duplicate keys, multiple
 * documents and alias bombs become issues; `data` is then undefined.
 */
export function parseYaml(file: string, text: string, issues: IssueCollector): YamlSource | undefined {
  let lineNo = 1;
  for (let start = 0; start <= text.length; lineNo++) {
    let end = text.indexOf('\n', start);
    if (end < 0) end = text.length;
    if (end - start > MAX_YAML_LINE_CHARS) {
      issues.add({
        file,
        line: lineNo,
        message: `line is ${((end - start) / 1048576).toFixed(1)} Mi characters long, more than the ${MAX_YAML_LINE_CHARS / 1048576} Mi limit`,
        hint: 'check for an unclosed quote or bracket on that line, or write long lists one item per line',
      });
      return undefined;
    }
    start = end + 1;
  }
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { lineCounter, uniqueKeys: true, prettyErrors: false, strict: true });
  let bad = false;
  for (const e of doc.errors) {
    bad = true;
    const line = e.linePos?.[0]?.line ?? (e.pos ? lineCounter.linePos(e.pos[0]).line : undefined);
    const first = e.message.split('\n')[0]!.replace(/ at line \d+, column \d+:?$/, '');
    const issue: InputIssue = { file, message: `YAML syntax: ${first}`, hint: yamlHint(e.code) };
    if (line !== undefined) issue.line = line;
    issues.add(issue);
  }
  if (bad) return undefined;
  let data: unknown;
  try {
    data = doc.toJS({ maxAliasCount: MAX_ALIAS_COUNT });
  } catch (e) {
    const first = (e as Error).message.split('\n')[0]!;
    // The yaml package throws the same error type for an alias without an anchor and for an alias bomb.
    issues.add(
      /unresolved alias/i.test(first)
        ? { file, message: `YAML syntax: ${first}`, hint: 'define the anchor (&name) before using the alias (*name), or write the value out' }
        : { file, message: `YAML aliases expand too much (${first})`, hint: `write the values out or use fewer aliases (at most ${MAX_ALIAS_COUNT} expansions)` },
    );
    return undefined;
  }
  return new YamlSource(file, doc, lineCounter, data);
}

function yamlHint(code: string): string {
  switch (code) {
    case 'DUPLICATE_KEY':
      return 'remove or rename one of the repeated keys';
    case 'MULTIPLE_DOCS':
      return 'keep a single YAML document in the file (one "---" at most)';
    case 'BAD_INDENT':
    case 'MISSING_CHAR':
    case 'UNEXPECTED_TOKEN':
      return 'check indentation, brackets and quotes near this line';
    default:
      return 'fix the YAML syntax near this line';
  }
}

/** Per-field help used as the next step for schema issues, keyed by the last path segment. */
export type FieldHelp = Record<string, string>;

/**
 * Converts zod issues into InputIssues with lines, field paths, expected vs
 * received, and a hint. `knownKeys(path)` lists the keys allowed at an object
 * path (for "did you mean" on unknown keys).
 */
export function zodIssuesToInput(
  src: YamlSource,
  zissues: readonly z.core.$ZodIssue[],
  help: FieldHelp,
  knownKeys: (path: readonly PropertyKey[]) => readonly string[],
  issues: IssueCollector,
): void {
  for (const zi of zissues) {
    const path = zi.path as PropertyKey[];
    const last = [...path].reverse().find((p) => typeof p === 'string') as string | undefined;
    const fieldHint = last !== undefined ? help[last] : undefined;
    const received = valueAt(src.data, path);
    switch (zi.code) {
      case 'unrecognized_keys': {
        const known = knownKeys(path);
        for (const key of zi.keys) {
          const issue: InputIssue = {
            file: src.file,
            path: pathToString([...path, key]),
            message: `unknown key "${key}"`,
            hint: suggestionOrList(key, known),
          };
          const line = src.lineOfKey(path, key);
          if (line !== undefined) issue.line = line;
          issues.add(issue);
        }
        break;
      }
      case 'invalid_type': {
        const missing = received === undefined;
        const expected = zi.expected === 'int' ? 'an integer' : zi.expected === 'tuple' || zi.expected === 'array' ? 'a list' : zi.expected === 'object' ? 'a mapping' : `a ${zi.expected}`;
        const msg = missing
          ? `missing required field "${last ?? pathToString(path)}"`
          : typeof received === 'number' && !Number.isFinite(received)
            ? `expected a finite number, received ${describeValue(received)}`
            : `expected ${expected}, received ${describeValue(received)}`;
        issues.add(src.issueAt(path, msg, fieldHint ?? (missing ? `add "${last}"` : undefined)));
        break;
      }
      case 'too_small':
      case 'too_big': {
        const bound = zi.code === 'too_small' ? zi.minimum : zi.maximum;
        const op = zi.code === 'too_small' ? (zi.inclusive ? '>=' : '>') : zi.inclusive ? '<=' : '<';
        const exact = (zi as { exact?: boolean }).exact === true;
        const msg =
          zi.origin === 'array' || zi.origin === 'set'
            ? `expected ${exact ? 'exactly' : op === '>=' ? 'at least' : op === '<=' ? 'at most' : op} ${String(bound)} item(s), received ${describeValue(received)}`
            : zi.origin === 'string'
              ? `expected a text of length ${op} ${String(bound)}, received ${describeValue(received)}`
              : `expected a value ${op} ${String(bound)}, received ${describeValue(received)}`;
        issues.add(src.issueAt(path, msg, fieldHint));
        break;
      }
      case 'invalid_value': {
        const values = zi.values.map((v) => String(v));
        const msg = `expected ${values.length === 1 ? `"${values[0]}"` : `one of ${values.map((v) => `"${v}"`).join(', ')}`}, received ${describeValue(received)}`;
        issues.add(src.issueAt(path, msg, typeof received === 'string' ? didYouMean(received, values) : fieldHint));
        break;
      }
      case 'invalid_union': {
        const opts = (zi as unknown as { options?: unknown[] }).options;
        if (opts && Array.isArray(opts)) {
          const values = opts.map(String);
          const msg = `expected one of ${values.map((v) => `"${v}"`).join(', ')}, received ${describeValue(received)}`;
          issues.add(src.issueAt(path, msg, typeof received === 'string' ? didYouMean(received, values) : fieldHint));
        } else {
          issues.add(src.issueAt(path, `does not match any allowed form (received ${describeValue(received)})`, fieldHint));
        }
        break;
      }
      case 'invalid_format': {
        const isName = zi.format === 'regex';
        const msg = `${describeValue(received)} is not a valid ${isName ? 'name' : zi.format}${isName && 'pattern' in zi ? ` (allowed: ${String(zi.pattern).replace(/^\/\^?|\$?\/$/g, '')})` : ''}`;
        issues.add(src.issueAt(path, msg, isName ? 'use only letters, digits, "_", "." and "-", e.g. front_center' : fieldHint));
        break;
      }
      default:
        issues.add(src.issueAt(path, `${zi.message} (received ${describeValue(received)})`, fieldHint));
    }
  }
}

function suggestionOrList(key: string, known: readonly string[]): string {
  // A known key that the unknown one starts with (focal_length → focal) is the likeliest intent.
  const prefix = known.filter((k) => key.toLowerCase().startsWith(k.toLowerCase())).sort((a, b) => b.length - a.length)[0];
  if (prefix !== undefined) return `did you mean "${prefix}"?`;
  const d = didYouMean(key, known, 'one of the keys');
  return d.startsWith('did you mean') ? d : `remove it; allowed keys here: ${known.join(', ')}`;
}

/** Value at a path inside plain data. */
export function valueAt(data: unknown, path: readonly PropertyKey[]): unknown {
  let v: unknown = data;
  for (const p of path) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<PropertyKey, unknown>)[p];
  }
  return v;
}
