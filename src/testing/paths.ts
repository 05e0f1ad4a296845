/** Locations of shared test inputs. */
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

/** Repository root (two levels above src/testing/). */
export function repoRoot(): string {
  return path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
}

/**
 * The shared reference-data directory: `<repoRoot>/../shared/reference-data`
 * when it exists (main checkout, CI clones beside shared/), else
 * `/work/shared/reference-data` (worktrees).
 */
export function referenceDataDir(): string {
  const rel = path.resolve(repoRoot(), '..', 'shared', 'reference-data');
  if (existsSync(rel)) return rel;
  return '/work/shared/reference-data';
}
