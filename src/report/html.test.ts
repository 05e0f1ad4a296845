/**
 * The HTML report as text: self-contained (no scripts, no URLs), one
 * residual plot and coverage map per camera, escaping of user text,
 * subsampling of big scatter plots, and the ellipse and sigma-ring figures.
 */
import { beforeAll, describe, expect, test } from 'vitest';
import { solvedFixture, type SolvedFixture } from '../testing/report-fixtures.js';
import { renderHtmlReport } from './html.js';
import { SAFETY_CAUTION } from './summary.js';

let stereo: SolvedFixture;
let html: string;

beforeAll(() => {
  stereo = solvedFixture('stereo-bench.yaml', { frames: 24, outlierFraction: 0.01, flippedViews: 1 });
  html = renderHtmlReport(stereo.solution, stereo.rig, { generatedAt: '2026-01-01T00:00:00Z' });
});

const count = (text: string, needle: string | RegExp) => text.split(needle).length - 1;

describe('renderHtmlReport', () => {
  test('is one self-contained document: no scripts, no external references, a CSP that forbids loads', () => {
    expect(html.startsWith('<!DOCTYPE html>')).toBe(true);
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toMatch(/\b(?:src|href)\s*=/i);
    expect(html).not.toMatch(/url\((?!#)/); // only in-document references such as url(#hatch)
    expect(html).not.toMatch(/@import|@font-face/);
    expect(html).toContain(`content="default-src 'none'`);
    expect(html).toContain('@media print');
  });

  test('one residual plot, histogram and coverage map per camera, each naming its camera', () => {
    for (const testid of ['residual-plot', 'histogram', 'coverage-map', 'camera-card']) {
      expect(count(html, `data-testid="${testid}"`)).toBe(stereo.solution.cameras.length);
    }
    for (const c of stereo.solution.cameras) expect(html).toContain(`data-testid="coverage-map" data-camera="${c.name}"`);
    expect(html).toContain('Gaps in coverage are the commonest cause of a poor calibration');
    expect(count(html, 'data-testid="rig-top"')).toBe(1);
    expect(count(html, 'data-testid="rig-side"')).toBe(1);
    expect(count(html, 'data-testid="frame-chart"')).toBe(1);
  });

  test('carries the safety caution, the extrinsics with 1-sigma, the solver stages and the rejected views', () => {
    expect(html).toContain(SAFETY_CAUTION.replace(/'/g, '&#39;'));
    for (const st of stereo.solution.stages) expect(html).toContain(`<th scope="row">${st.name}</th>`);
    const right = stereo.rig.cameras.find((c) => c.name === 'right')!;
    expect(html).toContain(`${(right.translation[0] * 1000).toFixed(1)}<span class="pm"> ± ${right.sigma_translation_mm[0].toFixed(2)}</span>`);
    expect(stereo.solution.rejectedViews.length).toBeGreaterThan(0); // the flipped view
    expect(count(html, 'class="rej-marker"')).toBe(new Set(stereo.solution.rejectedViews.map((v) => v.frame)).size);
    expect(html).toMatch(/magnified ×\d+/);
  });

  test('escapes user text (session name, warnings)', () => {
    const sol = { ...stereo.solution, session: { ...stereo.solution.session, name: '<b onclick="x">&' }, warnings: ['a <script>alert(1)</script> b'] };
    const out = renderHtmlReport(sol, { ...stereo.rig, name: '"quoted" <rig>' }, { title: 'T <i>' });
    expect(out).not.toContain('<script>');
    expect(out).not.toContain('<b onclick');
    expect(out).toContain('&lt;b onclick=&quot;x&quot;&gt;&amp;');
    expect(out).toContain('<title>T &lt;i&gt;</title>');
    expect(out).toContain('&quot;quoted&quot; &lt;rig&gt;');
  });

  test('subsamples scatter and coverage dots to the stated maximum and says so', () => {
    const out = renderHtmlReport(stereo.solution, stereo.rig, { maxScatterPoints: 100, maxCoveragePoints: 50 });
    const scatter = [...out.matchAll(/<path class="dots" d="([^"]*)"/g)].map((m) => count(m[1]!, 'h0'));
    expect(scatter).toEqual(stereo.solution.cameras.map(() => 100));
    const cov = [...out.matchAll(/<path class="cov-dots" d="([^"]*)"/g)].map((m) => count(m[1]!, 'h0'));
    expect(cov).toEqual(stereo.solution.cameras.map(() => 50));
    expect(out).toMatch(/Showing 100 of \d+ points \(evenly subsampled\)/);
  });

  test('the fraction of residuals inside 1/2/3 sigma is printed next to the Rayleigh values 39.3 / 86.5 / 98.9 %', () => {
    // Rayleigh CDF 1 − exp(−k²/2) at k = 1, 2, 3 (handbook formula): 0.3935, 0.8647, 0.9889.
    expect(html).toContain('(Gaussian: 39.3 / 86.5 / 98.9 %)');
    const m = /Inside 1\/2\/3σ: ([\d.]+) \/ ([\d.]+) \/ ([\d.]+) %/.exec(html)!;
    // Simulated Gaussian noise: within a few percent of the expected fractions.
    expect(Math.abs(Number(m[1]) - 39.3)).toBeLessThan(5);
    expect(Math.abs(Number(m[2]) - 86.5)).toBeLessThan(4);
  });

  test('the uncertainty ellipse of a camera with a diagonal covariance has the stated magnified semi-axes', () => {
    const sol = { ...stereo.solution, cameras: stereo.solution.cameras.map((c) => ({ ...c })) };
    const cam = sol.cameras.find((c) => !c.isReference)!;
    // Pure position covariance: σx = 2 mm, σy = 1 mm, σz = 4 mm, no rotation uncertainty.
    const cov = new Float64Array(36);
    cov[21] = 4e-6;
    cov[28] = 1e-6;
    cov[35] = 16e-6;
    cam.covariance = cov;
    const out = renderHtmlReport(sol, stereo.rig);
    const scale = Number(/magnified ×(\d+)/.exec(out)![1]);
    const top = /data-testid="rig-top"[\s\S]*?<ellipse class="sigma-ellipse"[^>]*rx="([\d.]+)" ry="([\d.]+)"/.exec(out)!;
    const rx = Number(top[1]);
    const ry = Number(top[2]);
    // Top view is the (x, z) plane: semi-axes 4 mm (z) and 2 mm (x) times the magnification, in the view's pixels per metre.
    expect(rx / ry).toBeCloseTo(2, 1);
    // Side view is the (z, −y) plane: semi-axes 4 mm and 1 mm.
    const side = /data-testid="rig-side"[\s\S]*?<ellipse class="sigma-ellipse"[^>]*rx="([\d.]+)" ry="([\d.]+)"/.exec(out)!;
    expect(Number(side[1]) / Number(side[2])).toBeCloseTo(4, 1);
    expect(scale).toBeGreaterThanOrEqual(1);
    expect(out).toContain('the largest 1-sigma along a reference axis is 4.00 mm');
  });
});
