/**
 * The quality report as a person sees it: the Seattle weather report (snow rare) built end to end
 * through `runEvaluate`, opened in headless Debian Chromium from the file alone. It must render with no
 * console or page errors, fetch nothing but itself, show every plot, and look like a page (the
 * screenshot is kept under the OS temp dir for a human to check).
 */
import { existsSync } from 'node:fs';
import { mkdtemp, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runEvaluate } from '../../../connector/cli/evaluate/run-evaluate.js';
import { fitModel } from '../../../model/fit.js';
import type { QualityReport } from '../../../model/quality/quality-report.js';
import { saveModel } from '../../../model/vae/index.js';
import { seattleWeatherRows, seattleWeatherSchema } from '../../support/open-data/seattle-weather.js';
import { writeSeattleWeatherFile } from '../../support/open-data/weather-file.js';

const CHROMIUM = '/usr/bin/chromium';
const CHROMIUM_ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'];
/** Where the last run's full-page screenshot is kept. */
export const SCREENSHOT = join(tmpdir(), 'raretide-quality-report.png');
const skipReason = existsSync(CHROMIUM) ? undefined : `${CHROMIUM} is absent (apt-get install chromium); CI installs it`;

if (skipReason !== undefined) it.skip(`report in a browser: skipped, ${skipReason}`, () => {});

describe.skipIf(skipReason !== undefined)('the quality report in headless Chromium', () => {
  let workspace = '';
  let htmlPath = '';
  let report: QualityReport;
  let browser: Browser;

  beforeAll(async () => {
    workspace = await mkdtemp(join(tmpdir(), 'raretide-report-browser-'));
    // Open data: NOAA Seattle daily weather via vega-datasets; snow is the rare class (26 of 1,461 days).
    const file = await writeSeattleWeatherFile(workspace);
    const fitted = await fitModel({
      schema: seattleWeatherSchema as never,
      records: seattleWeatherRows() as never,
      labelPath: 'weather',
      training: { hidden: [16], latent: 2, epochs: 8, batchSize: 128, seed: 2 },
    });
    await saveModel(join(workspace, 'model'), fitted.bundle);
    fitted.dispose();
    const config = join(workspace, 'weather.yaml');
    await writeFile(config, `label: {from: field, path: weather}\nbalance: {targets: {snow: 0.05}, maxPerRecord: 5}\nmodel: {dir: ${join(workspace, 'model')}}\n`);
    htmlPath = join(workspace, 'weather-report.html');
    report = await runEvaluate(
      { configPath: config, source: { kind: 'file', path: file }, out: htmlPath, seed: 4, bootstrapResamples: 50, quiet: true },
      { context: { env: {}, stdout: () => {}, stderr: () => {} } },
    );
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  }, 170_000);

  afterAll(async () => {
    await browser?.close();
    await rm(workspace, { recursive: true, force: true });
  });

  it('renders offline with no errors, every plot drawn, and a full-page screenshot that is a real picture', async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    const problems: string[] = [];
    const requests: string[] = [];
    page.on('console', (message) => {
      if (message.type() === 'error' || message.type() === 'warning') problems.push(`console ${message.type()}: ${message.text()}`);
    });
    page.on('pageerror', (error) => problems.push(`page error: ${error.message}`));
    page.on('request', (request) => requests.push(request.url()));
    const url = pathToFileURL(htmlPath).href;
    await page.goto(url, { waitUntil: 'load' });

    const plots = await page.evaluate<PlotFacts[]>(PLOT_FACTS);
    const count = (kind: string) => plots.filter((plot) => plot.kind === kind).length;
    expect(count('distribution')).toBe(report.plots.distributions.snow!.length);
    expect(count('distribution')).toBeGreaterThanOrEqual(4);
    expect(count('correlation')).toBe(1);
    expect(count('projection')).toBe(1);
    for (const plot of plots) {
      expect(plot.marks).toBeGreaterThan(10);
      expect(plot.width).toBeGreaterThan(100);
      expect(plot.height).toBeGreaterThan(80);
    }
    expect(await page.locator('#verdict .headline').textContent()).toBe(report.verdict.headline);
    expect(await page.locator('script').count()).toBe(0);

    await page.screenshot({ path: SCREENSHOT, fullPage: true });
    expect(problems).toEqual([]);
    expect(requests).toEqual([url]);
    await page.close();

    const png = await stat(SCREENSHOT);
    expect(png.size).toBeGreaterThan(50_000);
    const facts = await pictureFacts(browser, SCREENSHOT);
    expect(facts).toMatchObject({ signature: true, width: 1280 });
    expect(facts.height).toBeGreaterThan(2000);
    // Not a single colour: many colours, and the background (the commonest) far from all of it.
    expect(facts.distinctColours).toBeGreaterThan(50);
    expect(facts.commonestShare).toBeLessThan(0.97);
  });
});

// Code run in the page, as text: the project compiles without the DOM's types.
interface PlotFacts {
  readonly kind: string | null;
  readonly marks: number;
  readonly width: number;
  readonly height: number;
}
const PLOT_FACTS = `[...document.querySelectorAll('figure[data-plot]')].map((figure) => {
  const svg = figure.querySelector('svg');
  const box = svg ? svg.getBoundingClientRect() : { width: 0, height: 0 };
  return { kind: figure.getAttribute('data-plot'), marks: svg ? svg.querySelectorAll('path, rect, text').length : 0, width: box.width, height: box.height };
})`;

interface ColourFacts {
  readonly width: number;
  readonly height: number;
  readonly distinctColours: number;
  readonly commonestShare: number;
}
const COLOUR_FACTS = `async (base64) => {
  const image = new Image();
  image.src = 'data:image/png;base64,' + base64;
  await image.decode();
  const canvas = document.createElement('canvas');
  canvas.width = image.naturalWidth;
  canvas.height = image.naturalHeight;
  const context = canvas.getContext('2d');
  context.drawImage(image, 0, 0);
  const pixels = new Uint32Array(context.getImageData(0, 0, canvas.width, canvas.height).data.buffer);
  const counts = new Map();
  for (const pixel of pixels) counts.set(pixel, (counts.get(pixel) || 0) + 1);
  let commonest = 0;
  for (const count of counts.values()) commonest = Math.max(commonest, count);
  return { width: canvas.width, height: canvas.height, distinctColours: counts.size, commonestShare: commonest / pixels.length };
}`;

/** Decodes the PNG in a blank page (a data: URL, no network) and counts its colours. */
async function pictureFacts(browser: Browser, path: string): Promise<ColourFacts & { signature: boolean }> {
  const bytes = await readFile(path);
  // PNG signature, from the PNG specification (ISO/IEC 15948, section 5.2).
  const signature = bytes.subarray(0, 8).equals(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]));
  const page = await browser.newPage();
  try {
    const facts = await page.evaluate<ColourFacts>(`(${COLOUR_FACTS})(${JSON.stringify(bytes.toString('base64'))})`);
    return { signature, ...facts };
  } finally {
    await page.close();
  }
}
