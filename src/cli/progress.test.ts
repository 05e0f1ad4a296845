/** Progress indicator: silent unless enabled, redraws in place, at most one draw per whole percent. */
import { describe, expect, test } from 'vitest';
import { commandProgress, createProgress, progressBar } from './progress.js';

function sink() {
  const chunks: string[] = [];
  return { chunks, write: (t: string) => chunks.push(t), text: () => chunks.join('') };
}

describe('progress on stderr', () => {
  test('disabled: writes nothing at all', () => {
    const s = sink();
    const p = createProgress(s.write, false);
    p.status('loading');
    p.update('pnp', 5, 10);
    p.log('a line');
    p.end();
    expect(p.enabled).toBe(false);
    expect(s.chunks).toEqual([]);
  });

  test('commandProgress is on only for a terminal without --quiet', () => {
    const io = (tty: boolean) => ({ stdout: () => undefined, stderr: () => undefined, stderrIsTTY: tty });
    expect(commandProgress(io(true), false).enabled).toBe(true);
    expect(commandProgress(io(true), true).enabled).toBe(false);
    expect(commandProgress(io(false), false).enabled).toBe(false);
    expect(commandProgress({ stdout: () => undefined, stderr: () => undefined }, undefined).enabled).toBe(false);
  });

  test('redraws only when the whole percent changes: 100000 updates give at most 101 draws', () => {
    const s = sink();
    const p = createProgress(s.write, true);
    for (let i = 0; i <= 100000; i++) p.update('pnp', i, 100000);
    expect(s.chunks.length).toBeLessThanOrEqual(101);
    expect(s.chunks.length).toBeGreaterThanOrEqual(100);
    expect(s.chunks.at(-1)).toBe(`\r\x1b[2KPnP per view [${'█'.repeat(24)}] 100 % 100000/100000`);
  });

  test('a log line clears the indicator, prints, and redraws it; end clears it', () => {
    const s = sink();
    const p = createProgress(s.write, true);
    p.update('pnp', 1, 4);
    p.log('iteration 1');
    p.end();
    expect(s.chunks).toEqual([
      `\r\x1b[2KPnP per view [${'█'.repeat(6)}${'░'.repeat(18)}]  25 % 1/4`,
      '\r\x1b[2K',
      'iteration 1\n',
      `PnP per view [${'█'.repeat(6)}${'░'.repeat(18)}]  25 % 1/4`,
      '\r\x1b[2K',
    ]);
  });

  test('progressBar clamps and rounds', () => {
    expect(progressBar(-1, 4)).toBe('░░░░');
    expect(progressBar(0.5, 4)).toBe('██░░');
    expect(progressBar(2, 4)).toBe('████');
    expect(progressBar(NaN, 4)).toBe('░░░░');
  });
});
