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

describe('SIGINT during an atomic write (child process)', () => {
  test('the write completes or leaves nothing, no temp file remains, and the signal still ends the process', async () => {
    const ts = await import('typescript');
    const { spawnSync } = await import('node:child_process');
    const { fileURLToPath } = await import('node:url');
    const dir = makeTmpDir();
    // Transpile the two modules involved into plain JS so the child runs them with bare node.
    const here = path.dirname(fileURLToPath(import.meta.url));
    fs.mkdirSync(path.join(dir, 'io'));
    for (const [src, dst] of [
      [path.join(here, 'atomic.ts'), path.join(dir, 'io', 'atomic.js')],
      [path.join(here, '..', 'errors.ts'), path.join(dir, 'errors.js')],
    ] as const) {
      const out = ts.transpileModule(fs.readFileSync(src, 'utf8'), { compilerOptions: { module: ts.ModuleKind.ESNext, target: ts.ScriptTarget.ES2022 } });
      fs.writeFileSync(dst, out.outputText);
    }
    fs.writeFileSync(path.join(dir, 'package.json'), '{"type":"module"}');
    const outDir = path.join(dir, 'out');
    fs.mkdirSync(outDir);
    const target = path.join(outDir, 'rig.yaml');
    const child = path.join(dir, 'child.js');
    fs.writeFileSync(
      child,
      `import { writeFileAtomic, testHooks } from './io/atomic.js';
       testHooks.beforeRename = () => {
         process.kill(process.pid, 'SIGINT'); // arrives while the temp file exists
         const t = Date.now(); while (Date.now() - t < 100) {}
       };
       writeFileAtomic(${JSON.stringify(target)}, 'complete\\n');
       setTimeout(() => { console.log('survived'); }, 2000);`,
    );
    const r = spawnSync(process.execPath, [child], { encoding: 'utf8', timeout: 20_000 });
    expect(r.signal).toBe('SIGINT');
    expect(r.stdout).not.toContain('survived');
    const left = fs.readdirSync(outDir);
    expect(left.filter((f) => f.endsWith('.tmp'))).toEqual([]);
    // Either the file is complete or absent, never partial.
    if (left.includes('rig.yaml')) expect(fs.readFileSync(target, 'utf8')).toBe('complete\n');
  });
});
