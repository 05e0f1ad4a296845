/**
 * Atomic file output: write a temporary file in the target's directory,
 * fsync it, then move it into place, so a reader never sees a half-written
 * file and an interrupted run never leaves a truncated one.
 *
 * Existing files are never replaced unless `force` is set. The temporary file
 * is removed on every failure path; a process-level handler removes any that
 * are still registered when the process exits or receives SIGINT/SIGTERM/SIGHUP.
 *
 * The write is synchronous. Once the signal handler is installed, Node
 * delivers a signal only between synchronous stretches, so a signal that
 * arrives during a write is handled after the file is in place; the handler
 * then re-raises the signal with its default action if nobody else listens.
 */
import * as fs from 'node:fs';
import * as nodePath from 'node:path';
import { OptionsError, RigCalError } from '../errors.js';

export interface WriteOptions {
  /** Replace an existing file. */
  force?: boolean;
}

const activeTemps = new Set<string>();
const SIGNALS: NodeJS.Signals[] = ['SIGINT', 'SIGTERM', 'SIGHUP'];
let handlersInstalled = false;

/** Removes every temporary file still registered (used by the process handlers and tests). */
export function removeActiveTempFiles(): void {
  for (const t of activeTemps) {
    try {
      fs.unlinkSync(t);
    } catch {
      // Already gone.
    }
    activeTemps.delete(t);
  }
}

/** Number of temporary files currently registered (for tests). */
export function activeTempFileCount(): number {
  return activeTemps.size;
}

function onSignal(signal: NodeJS.Signals): void {
  removeActiveTempFiles();
  process.removeListener(signal, onSignal);
  // Restore the default action when we were the only listener.
  if (process.listenerCount(signal) === 0) process.kill(process.pid, signal);
}

function installHandlers(): void {
  if (handlersInstalled) return;
  handlersInstalled = true;
  process.on('exit', removeActiveTempFiles);
  for (const s of SIGNALS) process.on(s, onSignal);
}

function existsError(path: string): OptionsError {
  return new OptionsError('output.exists', `${path} already exists; pass --force to overwrite it`);
}

/**
 * Writes `text` to `path` atomically (temp file in the same directory, fsync,
 * rename). Throws OptionsError (code output.exists) when the file exists and
 * `force` is not set, RigCalError (code output.write_failed) on I/O errors.
 */
export function writeFileAtomic(path: string, text: string | Uint8Array, opts: WriteOptions = {}): void {
  const force = opts.force ?? false;
  if (!force && fs.existsSync(path)) throw existsError(path);
  const dir = nodePath.dirname(path);
  if (!fs.existsSync(dir)) {
    throw new OptionsError('output.no_directory', `directory ${dir} does not exist; create it first or choose another output path`);
  }
  installHandlers();
  const tmp = nodePath.join(dir, `.${nodePath.basename(path)}.${process.pid}.${Math.random().toString(36).slice(2, 10)}.tmp`);
  activeTemps.add(tmp);
  let fd: number | undefined;
  try {
    fd = fs.openSync(tmp, 'wx', 0o644);
    fs.writeFileSync(fd, text);
    fs.fsyncSync(fd);
    fs.closeSync(fd);
    fd = undefined;
    testHooks.beforeRename?.(tmp);
    if (force) {
      fs.renameSync(tmp, path);
    } else {
      // link() fails with EEXIST instead of replacing, closing the race with another writer.
      try {
        fs.linkSync(tmp, path);
        fs.unlinkSync(tmp);
      } catch (e) {
        const code = (e as NodeJS.ErrnoException).code;
        if (code === 'EEXIST') throw existsError(path);
        if (code === 'EPERM' || code === 'ENOTSUP' || code === 'EOPNOTSUPP' || code === 'ENOSYS' || code === 'EXDEV') {
          if (fs.existsSync(path)) throw existsError(path);
          fs.renameSync(tmp, path);
        } else throw e;
      }
    }
    activeTemps.delete(tmp);
    syncDirectory(dir);
  } catch (e) {
    if (fd !== undefined) {
      try {
        fs.closeSync(fd);
      } catch {
        // Closing is best effort on the failure path.
      }
    }
    try {
      fs.unlinkSync(tmp);
    } catch {
      // The temp file may not exist yet.
    }
    activeTemps.delete(tmp);
    if (e instanceof RigCalError) throw e;
    const err = e as NodeJS.ErrnoException;
    throw new RigCalError('output.write_failed', `cannot write ${path}: ${err.code ?? ''} ${err.message}`.trim());
  }
}

/** Makes the rename durable where the platform allows fsync on a directory. */
function syncDirectory(dir: string): void {
  let fd: number | undefined;
  try {
    fd = fs.openSync(dir, 'r');
    fs.fsyncSync(fd);
  } catch {
    // Not supported everywhere (e.g. Windows); the data itself is already synced.
  } finally {
    if (fd !== undefined) fs.closeSync(fd);
  }
}

/** Test-only hooks (e.g. to fail between write and rename). */
export const testHooks: { beforeRename?: (tmpPath: string) => void } = {};
