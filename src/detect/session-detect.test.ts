import * as fs from 'node:fs';
import * as path from 'node:path';
import { describe, expect, test } from 'vitest';
import { loadSession } from '../io/session.js';
import { catchInput, makeTmpDir, VALID_SESSION } from '../testing/io-fixtures.js';
import { checkImagePattern, compareFrameIds, listPatternFiles, planSessionDetection } from './session-detect.js';

function touch(...parts: string[]): string {
  const p = path.join(...parts);
  fs.mkdirSync(path.dirname(p), { recursive: true });
  fs.writeFileSync(p, '');
  return p;
}

describe('image patterns', () => {
  test.each([
    ['photos/{camera}/{frame}.png', []],
    ['captures/{frame}/{camera}.jpg', []],
    ['{camera}/{target}_{frame}.png', []],
    ['photos/{frame}.png', ['it has no {camera} placeholder']],
    ['photos/{camera}/x.png', ['it has no {frame} placeholder']],
    ['{camera}/{frame}_{frame}.png', ['{frame} appears more than once']],
    ['{camera}/{frame}/{cam}.png', ['unknown placeholder {cam} (use {camera}, {frame} and optionally {target})']],
  ])('%s', (pattern, problems) => {
    expect(checkImagePattern(pattern)).toEqual(problems);
  });

  test('frames are listed in natural order, with the text {frame} matched as id', () => {
    const dir = makeTmpDir('rigsolve-pattern-');
    for (const f of ['f10', 'f2', 'f1']) touch(dir, 'cam', `${f}.png`);
    touch(dir, 'cam', 'f3.jpg');
    fs.mkdirSync(path.join(dir, 'cam', 'f4.png'));
    const { matches } = listPatternFiles(path.join(dir, 'cam/{frame}.png'));
    expect(matches.map((m) => m.frame)).toEqual(['f1', 'f2', 'f10']);
    expect(matches[0]!.file).toBe(path.join(dir, 'cam', 'f1.png'));
    expect(compareFrameIds('img_9', 'img_10')).toBeLessThan(0);
  });

  test('{frame} may name a folder: captures/{frame}/{camera}.png', () => {
    const dir = makeTmpDir('rigsolve-pattern-');
    touch(dir, 'captures', '0001', 'left.png');
    touch(dir, 'captures', '0002', 'left.png');
    touch(dir, 'captures', '0002', 'right.png');
    const { matches } = listPatternFiles(path.join(dir, 'captures/{frame}/left.png'));
    expect(matches.map((m) => m.frame)).toEqual(['0001', '0002']);
    expect(listPatternFiles(path.join(dir, 'captures/{frame}/right.png')).matches.map((m) => m.frame)).toEqual(['0002']);
    expect(listPatternFiles(path.join(dir, 'nothing/{frame}.png')).missingDir).toBe(path.join(dir, 'nothing'));
  });
});

describe('planSessionDetection', () => {
  const twoBoards = VALID_SESSION.replace(
    `  - name: pts
    kind: points
    points: [[0, 0, 0], [0.5, 0, 0], [0, 0.5, 0], [0.5, 0.5, 0.1]]`,
    `  - name: board2
    kind: checkerboard
    inner_corners: [3, 4]
    square: 0.04`,
  );

  function sessionIn(dir: string, text: string) {
    fs.writeFileSync(path.join(dir, 'session.yaml'), text);
    return loadSession(path.join(dir, 'session.yaml'), { detections: 'skip' });
  }

  test('one job per image and checkerboard target; points targets are not detected', () => {
    const dir = makeTmpDir('rigsolve-plan-');
    const s = sessionIn(dir, VALID_SESSION);
    for (const c of ['cam_a', 'cam_b']) for (const f of ['1', '2']) touch(dir, 'img', c, `${f}.png`);
    touch(dir, 'img', 'cam_b', '3.png');
    const plan = planSessionDetection(s, path.join(dir, 'img/{camera}/{frame}.png'));
    expect(plan.jobs).toHaveLength(5);
    expect(plan.jobs.every((j) => j.board.columns === 4 && j.board.rows === 3)).toBe(true);
    expect(plan.frames).toEqual(['1', '2', '3']);
    expect(plan.meta.map((m) => `${m.camera}:${m.frame}`)).toEqual(['0:1', '0:2', '1:1', '1:2', '1:3']);
  });

  test('targets of the same size are refused unless the pattern has {target}', () => {
    const dir = makeTmpDir('rigsolve-plan-');
    const s = sessionIn(dir, twoBoards);
    for (const c of ['cam_a', 'cam_b']) for (const t of ['board', 'board2']) touch(dir, c, `${t}_1.png`);
    const err = catchInput(() => planSessionDetection(s, path.join(dir, '{camera}/{frame}.png')));
    expect(err.issues[0]!.message).toContain('"board" and "board2" both have 4x3 inner corners');
    expect(err.issues[0]!.hint).toContain('{target}');
    const plan = planSessionDetection(s, path.join(dir, '{camera}/{target}_{frame}.png'));
    expect(plan.jobs).toHaveLength(4);
    expect(plan.meta.map((m) => m.target)).toEqual([0, 1, 0, 1]);
    expect(plan.jobs.map((j) => `${j.board.columns}x${j.board.rows}`)).toEqual(['4x3', '3x4', '4x3', '3x4']);
  });

  test('frame ids that cannot go into a CSV column are refused', () => {
    const dir = makeTmpDir('rigsolve-plan-');
    const s = sessionIn(dir, VALID_SESSION);
    touch(dir, 'cam_a', 'a,b.png');
    touch(dir, 'cam_b', 'ok.png');
    const err = catchInput(() => planSessionDetection(s, path.join(dir, '{camera}/{frame}.png')));
    expect(err.issues.some((i) => i.message.includes('frame id "a,b" contains a comma'))).toBe(true);
  });
});
