import * as fs from 'node:fs';
import * as path from 'node:path';
import { afterEach, describe, expect, test } from 'vitest';
import { OptionsError, RigCalError } from '../errors.js';
import { activeTempFileCount, removeActiveTempFiles, testHooks, writeFileAtomic } from './atomic.js';
import { makeTmpDir } from '../testing/io-fixtures.js';

afterEach(() => {
  delete testHooks.beforeRename;
});

describe('writeFileAtomic', () => {
  test('writes a new file and leaves nothing else behind', () => {
    const dir = makeTmpDir();
    const file = path.join(dir, 'out.txt');
    writeFileAtomic(file, 'hello\n');
    expect(fs.readFileSync(file, 'utf8')).toBe('hello\n');
    expect(fs.readdirSync(dir)).toEqual(['out.txt']);
    expect(activeTempFileCount()).toBe(0);
  });

  test('an existing file is kept without force and replaced with force', () => {
    const dir = makeTmpDir();
    const file = path.join(dir, 'out.txt');
    fs.writeFileSync(file, 'old');
    expect(() => writeFileAtomic(file, 'new')).toThrow(OptionsError);
    expect(fs.readFileSync(file, 'utf8')).toBe('old');
    writeFileAtomic(file, 'new', { force: true });
    expect(fs.readFileSync(file, 'utf8')).toBe('new');
    expect(fs.readdirSync(dir)).toEqual(['out.txt']);
  });

  test('a file appearing between the check and the move is not overwritten', () => {
    const dir = makeTmpDir();
    const file = path.join(dir, 'out.txt');
    testHooks.beforeRename = () => fs.writeFileSync(file, 'other writer');
    expect(() => writeFileAtomic(file, 'mine')).toThrow(/--force/);
    expect(fs.readFileSync(file, 'utf8')).toBe('other writer');
    expect(fs.readdirSync(dir)).toEqual(['out.txt']);
  });

  test('no temp file is left after a failure between write and rename', () => {
    const dir = makeTmpDir();
    const file = path.join(dir, 'out.txt');
    let seenTmp = '';
    testHooks.beforeRename = (tmp) => {
      seenTmp = tmp;
      expect(fs.existsSync(tmp)).toBe(true);
      throw new Error('disk vanished');
    };
    expect(() => writeFileAtomic(file, 'x')).toThrow(RigCalError);
    expect(path.dirname(seenTmp)).toBe(dir);
    expect(fs.readdirSync(dir)).toEqual([]);
    expect(activeTempFileCount()).toBe(0);
  });

  test('no temp file is left when the rename itself fails (target is a directory)', () => {
    const dir = makeTmpDir();
    const target = path.join(dir, 'taken');
    fs.mkdirSync(target);
    fs.writeFileSync(path.join(target, 'inside'), '');
    expect(() => writeFileAtomic(target, 'x', { force: true })).toThrow(RigCalError);
    expect(fs.readdirSync(dir)).toEqual(['taken']);
  });

  test('the process-level cleanup removes a temp file that is still registered (as on SIGINT)', () => {
    const dir = makeTmpDir();
    const file = path.join(dir, 'out.txt');
    testHooks.beforeRename = (tmp) => {
      expect(activeTempFileCount()).toBe(1);
      removeActiveTempFiles(); // what the SIGINT/SIGTERM/exit handlers run
      expect(fs.existsSync(tmp)).toBe(false);
      throw new Error('interrupted');
    };
    expect(() => writeFileAtomic(file, 'x')).toThrow();
    expect(fs.readdirSync(dir)).toEqual([]);
    expect(process.listeners('SIGINT').length).toBeGreaterThan(0);
  });

  test('a missing directory is an options error naming it', () => {
    const dir = makeTmpDir();
    expect(() => writeFileAtomic(path.join(dir, 'no', 'out.txt'), 'x')).toThrow(/does not exist/);
  });
});
