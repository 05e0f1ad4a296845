/**
 * Locates /shared/reference-data for tests: first `<repoRoot>/../shared`
 * (the layout of the main checkout and of CI clones), else `/work/shared`
 * (the layout of helper worktrees).
 */
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

/** Repository root: two levels above this file (src/testing/). */
export function repoRoot(): string {
  return path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
}

/** Absolute path of the shared reference-data folder; throws naming both places looked in. */
export function referenceDataDir(): string {
  const candidates = [path.resolve(repoRoot(), '../shared/reference-data'), '/work/shared/reference-data'];
  for (const c of candidates) if (existsSync(c)) return c;
  throw new Error(`reference data not found; looked in ${candidates.join(' and ')}`);
}
