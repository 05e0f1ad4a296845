/**
 * The HTML report in headless Chromium (the Debian package at
 * /usr/bin/chromium, driven by playwright-core; never a browser downloaded
 * from npm): the page renders with no console errors and no network request
 * other than the file itself, contains one coverage map and one residual
 * plot per camera with a visible size, and a full-page screenshot is written
 * to test-artifacts/report.png (plus the HTML and a print-media PDF).
 */
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as nodePath from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, test } from 'vitest';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { PNG } from 'pngjs';
import { renderHtmlReport } from '../src/report/html.js';
import { repoRoot } from '../src/testing/paths.js';
import { solvedFixture, type SolvedFixture } from '../src/testing/report-fixtures.js';

const CHROMIUM = '/usr/bin/chromium';
const ARTIFACTS = nodePath.join(repoRoot(), 'test-artifacts');

let fixture: SolvedFixture;
let context: BrowserContext;
let page: Page;
let userDataDir: string;
const consoleErrors: string[] = [];
const requests: string[] = [];
let reportUrl: string;

beforeAll(async () => {
  if (!fs.existsSync(CHROMIUM)) {
    throw new Error(`${CHROMIUM} not found: install the Debian package first (apt-get install -y chromium); .ci/run does this`);
  }
  // Surround rig with outliers and one flipped board: rejected detections and views appear on the page.
  fixture = solvedFixture('surround-6.yaml', { frames: 160, outlierFraction: 0.01, flippedViews: 1 });
  fs.mkdirSync(ARTIFACTS, { recursive: true });
  const file = nodePath.join(ARTIFACTS, 'report.html');
  fs.writeFileSync(file, renderHtmlReport(fixture.solution, fixture.rig));
  reportUrl = pathToFileURL(file).href;
  userDataDir = fs.mkdtempSync(nodePath.join(os.tmpdir(), 'rigsolve-chromium-'));
  context = await chromium.launchPersistentContext(userDataDir, {
    executablePath: CHROMIUM,
    headless: true,
    viewport: { width: 1280, height: 900 },
    args: [
      '--headless',
      '--no-sandbox',
      '--disable-gpu',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-quic',
      '--disable-component-update',
      '--disable-sync',
    ],
  });
  page = await context.newPage();
  page.on('console', (m) => {
    if (m.type() === 'error') consoleErrors.push(m.text());
  });
  page.on('pageerror', (e) => consoleErrors.push(e.message));
  page.on('request', (r) => requests.push(r.url()));
  await page.goto(reportUrl, { waitUntil: 'load' });
});

afterAll(async () => {
  await context?.close();
  if (userDataDir) fs.rmSync(userDataDir, { recursive: true, force: true });
});

describe('HTML report in headless Chromium', () => {
  test('renders without console errors and loads nothing but itself', () => {
    expect(consoleErrors).toEqual([]);
    expect(requests).toEqual([reportUrl]);
  });

  test('one coverage map and one residual plot per camera, each drawn at a visible size', async () => {
    const names = fixture.solution.cameras.map((c) => c.name);
    for (const testid of ['coverage-map', 'residual-plot']) {
      const cams = await page.locator(`[data-testid="${testid}"]`).evaluateAll((els) => els.map((e) => e.getAttribute('data-camera')));
      expect(cams).toEqual(names);
      const boxes = await page.locator(`[data-testid="${testid}"] svg`).evaluateAll((els) => els.map((e) => e.getBoundingClientRect()));
      for (const b of boxes) {
        expect(b.width).toBeGreaterThan(150);
        expect(b.height).toBeGreaterThan(80);
      }
    }
    expect(await page.locator('[data-testid="rig-top"] .frustum').count()).toBe(names.length);
    expect(await page.locator('[data-testid="rig-side"] .frustum').count()).toBe(names.length);
    expect(await page.locator('[data-testid="caution"]').isVisible()).toBe(true);
  });

  test('no camera label in the rig views overlaps another', async () => {
    for (const view of ['rig-top', 'rig-side']) {
      const boxes = await page.locator(`[data-testid="${view}"] .cam-label`).evaluateAll((els) => els.map((e) => e.getBoundingClientRect()));
      for (let i = 0; i < boxes.length; i++) for (let j = i + 1; j < boxes.length; j++) {
        const a = boxes[i]!, b = boxes[j]!;
        const overlap = a.left < b.right - 1 && b.left < a.right - 1 && a.top < b.bottom - 1 && b.top < a.bottom - 1;
        expect(overlap, `${view}: labels ${i} and ${j} overlap`).toBe(false);
      }
    }
  });

  test('writes a full-page screenshot to test-artifacts/report.png and a print PDF', async () => {
    const png = nodePath.join(ARTIFACTS, 'report.png');
    await page.screenshot({ path: png, fullPage: true });
    const img = PNG.sync.read(fs.readFileSync(png));
    expect(img.width).toBe(1280);
    expect(img.height).toBeGreaterThan(2000);
    await page.emulateMedia({ media: 'print' });
    const pdf = await page.pdf({ format: 'A4', printBackground: true });
    fs.writeFileSync(nodePath.join(ARTIFACTS, 'report.pdf'), pdf);
    expect(pdf.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    await page.emulateMedia({ media: 'screen' });
  });
});
