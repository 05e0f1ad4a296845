import { describe, expect, test } from 'vitest';
import { InputError } from '../errors.js';
import { loadDetections, parseDetections, type DetectionContext } from './detections.js';
import { IssueCollector } from './issues.js';
import { makeTmpDir } from '../testing/io-fixtures.js';
import * as fs from 'node:fs';
import * as path from 'node:path';

const ctx: DetectionContext = {
  cameras: [
    { name: 'a', resolution: [100, 50] },
    { name: 'b', resolution: [100, 50] },
  ],
  targets: [{ name: 't', numPoints: 10 }],
};

function parse(text: string, c: DetectionContext = ctx) {
  const issues = new IssueCollector();
  const r = parseDetections(text, 'd.csv', c, issues);
  return { ...r, issues };
}

describe('parseDetections (RFC 4180 scanner)', () => {
  test('quoted fields: commas, doubled quotes and a line break inside quotes; lines stay physical', () => {
    const { table, frames, issues } = parse('frame,camera,target,point,u,v\n"x,1",a,t,0,1,2\n"multi\nline",b,t,1,3,4\n"q""q",a,t,2,5,6\n');
    expect(issues.total).toBe(0);
    expect(frames).toEqual(['x,1', 'multi\nline', 'q"q']);
    expect(Array.from(table.line)).toEqual([2, 3, 5]);
  });

  test('CRLF, lone CR, BOM and blank lines', () => {
    const { table, issues } = parse('\uFEFFframe,camera,target,point,u,v\r\n0,a,t,0,1,2\r0,b,t,0,1,2\r\n\r\n   \n');
    expect(issues.total).toBe(0);
    expect(table.count).toBe(2);
    expect(Array.from(table.line)).toEqual([2, 3]);
  });

  test('sigma column: empty cell means "use the camera default" (NaN), values are kept', () => {
    const { table, issues } = parse('sigma,frame,camera,target,point,u,v\n,0,a,t,0,1,2\n0.25,0,b,t,0,1,2\n');
    expect(issues.total).toBe(0);
    expect(Number.isNaN(table.sigma[0]!)).toBe(true);
    expect(table.sigma[1]).toBe(0.25);
  });

  test('image bounds are inclusive at [-0.5, w-0.5] x [-0.5, h-0.5]', () => {
    const ok = parse('frame,camera,target,point,u,v\n0,a,t,0,-0.5,-0.5\n0,a,t,1,99.5,49.5\n0,b,t,0,0,0\n');
    expect(ok.issues.total).toBe(0);
    const bad = parse('frame,camera,target,point,u,v\n0,a,t,0,-0.5000001,0\n0,a,t,1,1,49.51\n0,b,t,0,0,0\n');
    expect(bad.issues.total).toBe(2);
  });

  test('hex and empty numbers are rejected', () => {
    const { issues } = parse('frame,camera,target,point,u,v\n0,a,t,0,0x10,1\n0,b,t,0,,1\n');
    expect(issues.total).toBe(2);
  });

  test('every bad row is counted while only the first issues are stored', () => {
    const rows = ['frame,camera,target,point,u,v'];
    for (let i = 0; i < 5000; i++) rows.push(`${i},a,t,0,-7,1`);
    rows.push('x,b,t,0,1,1');
    const issues = new IssueCollector(50);
    parseDetections(rows.join('\n'), 'd.csv', ctx, issues);
    expect(issues.total).toBe(5000);
    expect(issues.issues).toHaveLength(50);
  });

  test('an unknown camera is listed once (first row) but every row is counted', () => {
    const { issues } = parse('frame,camera,target,point,u,v\n0,zz,t,0,1,1\n1,zz,t,0,1,1\n0,a,t,0,1,1\n0,b,t,0,1,1\n');
    expect(issues.total).toBe(2);
    expect(issues.issues).toHaveLength(1);
    expect(issues.issues[0]!.line).toBe(2);
  });

  test('duplicate rows name both lines', () => {
    const { issues } = parse('frame,camera,target,point,u,v\n0,a,t,3,1,1\n0,b,t,3,1,1\n0,a,t,3,2,2\n');
    expect(issues.issues[0]!.line).toBe(4);
    expect(issues.issues[0]!.message).toContain('line 2');
  });

  test('500k rows load into the table with the right contents', () => {
    const n = 500_000;
    const parts: string[] = ['frame,camera,target,point,u,v,sigma\n'];
    for (let i = 0; i < n; i++) parts.push(`f${i >> 4},${i & 1 ? 'b' : 'a'},t,${(i >> 1) & 7},${(i % 97) + 0.25},${(i % 43) + 0.5},0.5\n`);
    const { table, frames, issues, perCamera } = parse(parts.join(''));
    expect(issues.total).toBe(0);
    expect(table.count).toBe(n);
    expect(frames.length).toBe(n / 16);
    expect(perCamera).toEqual([n / 2, n / 2]);
    expect(table.u[12345]).toBe((12345 % 97) + 0.25);
    expect(table.point[12345]).toBe((12345 >> 1) & 7);
    expect(table.line[n - 1]).toBe(n + 1);
  });

  test('loadDetections throws one InputError with every issue', () => {
    const dir = makeTmpDir();
    const file = path.join(dir, 'd.csv');
    fs.writeFileSync(file, 'frame,camera,target,point,u,v\n0,a,t,10,1,1\n0,b,t,-1,1,1\n');
    try {
      loadDetections(file, ctx);
      throw new Error('expected a failure');
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      const err = e as InputError;
      expect(err.code).toBe('detections.invalid');
      expect(err.issues.map((i) => i.line)).toEqual([2, 3]);
    }
  });
});
