/**
 * Shared machinery for the loaders: an issue collector that counts every
 * issue but stores only the first few thousand, and a few formatting helpers
 * for "expected … received …" messages.
 */
import { InputError, type InputIssue, suggestSimilar } from '../errors.js';

/** Issues stored per collector; the rest are only counted (a 500k-row CSV can be all wrong). */
export const MAX_STORED_ISSUES = 1000;

export class IssueCollector {
  readonly issues: InputIssue[] = [];
  total = 0;
  constructor(readonly cap: number = MAX_STORED_ISSUES) {}

  add(issue: InputIssue): void {
    this.total++;
    if (this.issues.length < this.cap) this.issues.push(issue);
  }

  get ok(): boolean {
    return this.total === 0;
  }

  /** Throws an InputError carrying every stored issue when any was found. */
  throwIfAny(code: string): void {
    if (this.total > 0) throw new InputError(code, this.issues, this.total);
  }
}

/** Short, quoted description of a received value for messages. */
export function describeValue(v: unknown): string {
  if (v === undefined) return 'nothing';
  if (v === null) return 'null';
  if (typeof v === 'number') {
    if (Number.isNaN(v)) return 'NaN';
    if (!Number.isFinite(v)) return v > 0 ? 'Infinity' : '-Infinity';
    return String(v);
  }
  if (typeof v === 'string') {
    const s = v.length > 40 ? `${v.slice(0, 37)}...` : v;
    return JSON.stringify(s);
  }
  if (typeof v === 'boolean') return String(v);
  if (Array.isArray(v)) return `a list of ${v.length}`;
  if (typeof v === 'object') return 'a mapping';
  return typeof v;
}

/** "did you mean …?" text, or a fallback listing the choices. */
export function didYouMean(word: string, allCandidates: readonly string[], what = 'one of'): string {
  const candidates = [...new Set(allCandidates)];
  const s = suggestSimilar(word, candidates);
  if (s !== undefined && s !== word) return `did you mean "${s}"?`;
  const list = candidates.slice(0, 12).map((c) => `"${c}"`).join(', ');
  return candidates.length ? `use ${what} ${list}${candidates.length > 12 ? ', …' : ''}` : 'check the spelling';
}

/** Renders a zod-style path as `cameras[2].focal`. */
export function pathToString(path: readonly PropertyKey[]): string {
  let s = '';
  for (const p of path) {
    if (typeof p === 'number') s += `[${p}]`;
    else s += s ? `.${String(p)}` : String(p);
  }
  return s;
}
