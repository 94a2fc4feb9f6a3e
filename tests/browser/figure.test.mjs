// Figures for a paper: every plot exports from the core's one drawing path
// as an SVG sized in millimetres (text as text) or a PNG at a chosen
// resolution whose pHYs chunk records it; a panel figure is lettered.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';

import { launch, pageUrl, shotDir } from './harness.mjs';

let browser;

before(async () => {
  browser = await launch('figure', { acceptDownloads: true });
});

after(async () => {
  if (browser) await browser.close();
});

async function open() {
  const page = await browser.context.newPage();
  const errors = [];
  page.on('pageerror', (err) => errors.push(String(err?.stack ?? err)));
  page.on('console', (msg) => { if (msg.type() === 'error') errors.push(msg.text()); });
  await page.goto(pageUrl);
  await page.waitForFunction(() => window.turnover?.lastResult?.() && window.turnoverTraces?.lastResult());
  return { page, errors };
}

async function downloaded(page, selector) {
  const [download] = await Promise.all([page.waitForEvent('download'), page.click(selector)]);
  const path = join(shotDir, download.suggestedFilename());
  await download.saveAs(path);
  return { path, name: download.suggestedFilename(), bytes: readFileSync(path) };
}

/** The SVG read by the browser's XML parser: its size, its texts, its circles. */
function readSvg(page, text) {
  return page.evaluate((svg) => {
    const doc = new DOMParser().parseFromString(svg, 'image/svg+xml');
    const error = doc.querySelector('parsererror');
    const root = doc.documentElement;
    return {
      error: error ? error.textContent : null,
      width: root.getAttribute('width'),
      height: root.getAttribute('height'),
      texts: [...doc.querySelectorAll('text')].map((t) => t.textContent.trim()),
      circles: doc.querySelectorAll('circle').length,
      fonts: [...new Set([...doc.querySelectorAll('text')].map((t) => t.getAttribute('font-family') ?? t.closest('[font-family]')?.getAttribute('font-family')))],
    };
  }, text);
}

test('a plot exports as SVG in millimetres, parses as XML, has a marker per point and axis labels with units', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  const points = (await page.evaluate(() => window.turnover.lastResult())).points.length;
  await page.locator('#plots-panel').scrollIntoViewIfNeeded();
  const file = await downloaded(page, 'button.svg[data-kind="direct"]');
  assert.match(file.name, /\.svg$/);
  const svg = await readSvg(page, file.bytes.toString('utf8'));
  assert.equal(svg.error, null, 'the SVG parses as XML');
  assert.equal(svg.width, '85mm');
  assert.equal(svg.height, '65mm');
  assert.equal(svg.circles, points, 'one marker per data point');
  assert.ok(svg.texts.some((t) => t.includes('[S] (mM)')), `an x label with its unit: ${svg.texts}`);
  assert.ok(svg.texts.some((t) => t.includes('v (µM/min)')), `a y label with its unit: ${svg.texts}`);
  assert.ok(svg.fonts.every((f) => f && /sans-serif/.test(f)), `fonts named with fallbacks: ${svg.fonts}`);
  // Double-column width, a title and the constants on the plot.
  await page.selectOption('#figure-width', '175');
  await page.check('#figure-title');
  await page.check('#figure-constants');
  const wide = await readSvg(page, (await downloaded(page, 'button.svg[data-kind="direct"]')).bytes.toString('utf8'));
  assert.equal(wide.width, '175mm');
  assert.ok(wide.texts.some((t) => /^Km = /.test(t)), `constants printed on the plot: ${wide.texts}`);
  // A panel figure, lettered.
  const panels = await readSvg(page, (await downloaded(page, '#figure-panels')).bytes.toString('utf8'));
  for (const letter of ['A', 'B', 'C']) assert.ok(panels.texts.includes(letter), `panel ${letter}`);
  assert.deepEqual(errors, []);
  await page.close();
});

test('PNG export has the pixel size and the pHYs resolution of the chosen millimetres and dpi', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  await page.selectOption('#figure-format', 'png');
  for (const dpi of [300, 600]) {
    await page.selectOption('#figure-dpi', String(dpi));
    await page.locator('#plots-panel').scrollIntoViewIfNeeded();
    const file = await downloaded(page, 'button.svg[data-kind="residuals"]');
    const png = file.bytes;
    assert.deepEqual([...png.subarray(0, 8)], [137, 80, 78, 71, 13, 10, 26, 10], 'a PNG signature');
    // IHDR follows the signature: width and height, big-endian.
    const width = png.readUInt32BE(16);
    const height = png.readUInt32BE(20);
    assert.equal(width, Math.round((85 / 25.4) * dpi));
    assert.equal(height, Math.round((65 / 25.4) * dpi));
    const at = png.indexOf(Buffer.from('pHYs'));
    assert.ok(at > 0, 'a pHYs chunk');
    assert.equal(png.readUInt32BE(at + 4), Math.round(dpi / 0.0254), 'pixels per metre, x');
    assert.equal(png.readUInt32BE(at + 8), Math.round(dpi / 0.0254), 'pixels per metre, y');
    assert.equal(png[at + 12], 1, 'unit: the metre');
  }
  assert.deepEqual(errors, []);
  await page.close();
});

test('time-course, inhibitor-series and dose-response plots export the same way', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  for (const selector of ['button.trace-figure[data-kind="trace-detail"]', 'button.trace-figure[data-kind="plate"]', 'button.trace-figure[data-kind="rate-against-enzyme"]']) {
    await page.locator(selector).scrollIntoViewIfNeeded();
    const svg = await readSvg(page, (await downloaded(page, selector)).bytes.toString('utf8'));
    assert.equal(svg.error, null, `${selector} parses`);
    assert.equal(svg.width, '85mm');
  }
  await page.click('#load-inhibition-demo');
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#inhibition-status')?.dataset.state));
  const dixon = await readSvg(page, (await downloaded(page, 'button.inhibition-svg[data-kind="dixon"]')).bytes.toString('utf8'));
  assert.equal(dixon.error, null);
  assert.ok(dixon.texts.some((t) => /1\/v \(/.test(t)), `the Dixon y axis carries its unit: ${dixon.texts}`);
  await page.click('#load-dose-demo');
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#dose-status')?.dataset.state));
  const dose = await readSvg(page, (await downloaded(page, '#dose-svg')).bytes.toString('utf8'));
  assert.equal(dose.error, null);
  assert.ok(dose.texts.some((t) => /IC50/.test(t)), 'the IC50 is marked');
  assert.deepEqual(errors, []);
  await page.close();
});
