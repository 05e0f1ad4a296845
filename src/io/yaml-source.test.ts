import fc from 'fast-check';
import { describe, expect, test } from 'vitest';
import { firstInvalidUtf8Offset, parseYaml } from './yaml-source.js';
import { IssueCollector } from './issues.js';

describe('firstInvalidUtf8Offset', () => {
  // Reference: the WHATWG TextDecoder in Node (fatal mode) decides well-formedness.
  const decodes = (b: Uint8Array) => {
    try {
      new TextDecoder('utf-8', { fatal: true }).decode(b);
      return true;
    } catch {
      return false;
    }
  };

  test('agrees with TextDecoder on random bytes, and the prefix before the offset decodes', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 40 }), (bytes) => {
        const off = firstInvalidUtf8Offset(bytes);
        expect(off === bytes.length).toBe(decodes(bytes));
        expect(decodes(bytes.subarray(0, off))).toBe(true);
      }),
      { numRuns: 2000 },
    );
  });

  test.each([
    ['overlong 2-byte', [0x41, 0xc0, 0x80], 1],
    ['surrogate', [0xed, 0xa0, 0x80], 0],
    ['beyond U+10FFFF', [0xf4, 0x90, 0x80, 0x80], 0],
    ['truncated 3-byte', [0x41, 0x42, 0xe2, 0x82], 2],
    ['valid euro sign', [0xe2, 0x82, 0xac], 3],
  ])('%s', (_n, bytes, off) => {
    expect(firstInvalidUtf8Offset(Uint8Array.from(bytes))).toBe(off);
  });
});

describe('parseYaml', () => {
  test('maps nested paths to lines, for block and flow collections', () => {
    const issues = new IssueCollector();
    const src = parseYaml('x.yaml', 'a: 1\nb:\n  - c: [1,\n      2]\n  - d: 4\n', issues)!;
    expect(issues.total).toBe(0);
    expect(src.lineOf(['b', 0, 'c', 1])).toBe(4);
    expect(src.lineOf(['b', 1, 'd'])).toBe(5);
    expect(src.lineOf(['b', 1, 'missing'])).toBe(5); // nearest existing ancestor
    expect(src.lineOfKey(['b', 1], 'd')).toBe(5);
  });

  test('an alias bomb is stopped quickly with an issue', () => {
    const lines = ['a: &a [x, x, x, x, x, x, x, x, x, x]'];
    for (let k = 1; k < 12; k++) lines.push(`a${k}: &a${k} [${new Array(10).fill(k === 1 ? '*a' : `*a${k - 1}`).join(', ')}]`);
    const issues = new IssueCollector();
    expect(parseYaml('bomb.yaml', lines.join('\n'), issues)).toBeUndefined();
    expect(issues.issues[0]!.message).toContain('aliases expand too much');
  });

  test('multiple documents are refused', () => {
    const issues = new IssueCollector();
    expect(parseYaml('m.yaml', 'a: 1\n---\nb: 2\n', issues)).toBeUndefined();
    expect(issues.total).toBeGreaterThan(0);
  });
});
