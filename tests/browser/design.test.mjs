// Browser tests for the planning section of dist/turnover.html: the
// demo's plan comes from the core (the command line's `design` gives the
// same recommended concentrations and predicted errors to 1e-8, the
// WebAssembly's libm differing from the host's in the last bits), the form
// is part of the document, unreadable fields are said, the plate map reads
// back as a layout, the pipetting volumes add up, and an inhibition plan
// runs in the background with Stop. Headless Debian Chromium from file://.
//
// Run:  cd tests/browser && TURNOVER_HTML=../../dist/turnover.html TURNOVER_BIN=../../target/release/turnover node --test design.test.mjs

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';

import { launch, pageUrl, shotDir, openWatched } from './harness.mjs';

const bin = resolve(process.env.TURNOVER_BIN ?? join('..', '..', 'target', 'release', 'turnover'));
let browser;
before(async () => { browser = await launch('design', { acceptDownloads: true }); });
after(async () => { if (browser) await browser.close(); });

const openPage = () => openWatched(browser.context);

const planned = (page) => page.waitForFunction(() => window.turnover.design.lastResult() !== null || window.turnover.design.lastError(), null, { timeout: 120_000 });

test('the planning demo: the core’s plan, as the command line makes it; the pipetting volumes add up', { timeout: 120_000 }, async () => {
  const { page, errors } = await openPage();
  await page.click('#load-design-demo');
  await planned(page);
  const r = await page.evaluate(() => window.turnover.design.lastResult());
  assert.equal(r.model, 'mm');
  assert.equal(r.concentrations.length, 8);
  // 0.2–5×Km (common practice): from 1 to 25 µM for Km = 5.
  assert.ok(Math.abs(r.concentrations[0] - 1) < 1e-9 && Math.abs(r.concentrations[7] - 25) < 1e-9, `${r.concentrations}`);
  // The shown table is the core's numbers.
  const shown = await page.$$eval('#design-precision tbody tr', (trs) => trs.map((tr) => [tr.dataset.param, Number(tr.dataset.predictedSe)]));
  assert.deepEqual(shown, r.predicted.map((p) => [p.name, p.std_error]));
  // The pipetting table: every well adds up to the well volume.
  for (const row of r.pipetting.rows) {
    const total = row.s_volume + row.i_volume + row.buffer_volume + row.other_volume;
    assert.ok(Math.abs(total - 200) < 1e-9, `${row.well}: ${total} µL`);
  }
  // The command line's plan of the same request: same concentrations and
  // predicted errors (the prediction uses no randomness).
  if (existsSync(bin)) {
    const cli = JSON.parse(execFileSync(bin, ['design', '--model', 'mm', '--guess', 'Vmax=10,Km=5', '--range', 'Km=2:20', '--noise', '5%', '--points', '8', '--replicates', '2', '--simulations', '0', '--json']).toString());
    assert.equal(cli.concentrations.length, r.concentrations.length);
    cli.concentrations.forEach((c, k) => assert.ok(Math.abs(c - r.concentrations[k]) <= 1e-12 * c));
    cli.predicted.forEach((p, k) => assert.ok(Math.abs(p.std_error - r.predicted[k].std_error) <= 1e-8 * p.std_error, `${p.name}: ${p.std_error} vs ${r.predicted[k].std_error}`));
  }
  // The plate map is a layout the time-course section reads: pasted there,
  // it gives the wells and their [S].
  await page.fill('#layout-input', r.plate_map.text);
  const layout = await page.evaluate(() => window.turnover.doc().traces.layout);
  assert.equal(layout, r.plate_map.text);
  await page.locator('#design-panel').screenshot({ path: join(shotDir, 'design.png') });
  assert.deepEqual(errors, []);
  await page.close();
});

test('planning: the form is the document; an unreadable guess is said; an inhibition plan runs in the background and can be stopped', { timeout: 180_000 }, async () => {
  const { page, errors } = await openPage();
  await page.click('#load-design-demo');
  await planned(page);
  await page.fill('#design-guess-Km-value', 'five');
  await page.evaluate(() => window.turnover.analyse());
  assert.match(await page.locator('#design-status').textContent(), /guess of Km: .*five/);
  assert.equal(await page.evaluate(() => window.turnover.design.lastResult()), null, 'no plan from an unreadable guess');
  await page.evaluate(() => window.turnover.undo());
  await page.evaluate(() => window.turnover.analyse());
  assert.equal(await page.inputValue('#design-guess-Km-value'), '5');
  await planned(page);
  // An inhibition plan: the page keeps answering while it runs, and Stop ends it.
  await page.selectOption('#design-model', 'competitive');
  await page.fill('#design-guess-Kic-value', '3');
  await page.fill('#design-inhibitor-stock', '500');
  await page.fill('#design-simulations', '2000');
  await page.evaluate(() => window.turnover.analyse());
  assert.equal(await page.evaluate(() => window.turnover.design.running()), true);
  const t0 = Date.now();
  await page.evaluate(() => 1 + 1);
  assert.ok(Date.now() - t0 < 1000, 'the page answers while the plan runs');
  await page.click('#design-stop');
  assert.equal(await page.evaluate(() => window.turnover.design.running()), false);
  assert.match(await page.locator('#design-status').textContent(), /Stopped/);
  // A small inhibition plan finishes, with the chance of naming the mechanism.
  await page.fill('#design-simulations', '40');
  await page.evaluate(() => window.turnover.analyse());
  await planned(page);
  const r = await page.evaluate(() => window.turnover.design.lastResult());
  assert.ok(r, await page.locator('#design-status').textContent());
  assert.ok(r.mechanism && r.mechanism.correct >= 0 && r.mechanism.correct <= 1, JSON.stringify(r.mechanism));
  assert.ok(r.inhibitor_concentrations.length >= 2);
  assert.deepEqual(errors, []);
  await page.close();
});

test('planning: the noise can be taken from the rate section’s current fit', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  // The start demo has a rate fit with equal weights: its residual SD becomes constant noise.
  const fit = await page.evaluate(() => window.turnover.lastResult().fit);
  await page.click('#design-noise-from-fit');
  const d = await page.evaluate(() => window.turnover.doc().design);
  assert.equal(d.noise_kind, fit.weighting === 'relative' ? 'proportional' : 'constant');
  const expected = fit.weighting === 'relative' ? 100 * fit.sigma : fit.sigma;
  assert.ok(Math.abs(Number(d.noise) / expected - 1) < 5e-3, `${d.noise} vs ${expected}`);
  assert.match(await page.textContent('#design-noise-note'), /From the rate fit/);
  assert.deepEqual(errors, []);
  await page.close();
});
