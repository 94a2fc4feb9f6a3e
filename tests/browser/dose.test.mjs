// Browser tests for the dose-response section of dist/turnover.html (IC50,
// Cheng-Prusoff Ki, Morrison tight binding) and for the inhibitor-series
// plots' SVG buttons and click-to-exclude, in headless Debian Chromium
// through playwright-core, from file://, with every non-local request
// counted and refused.
//
// Run:  cd tests/browser && TURNOVER_HTML=../../dist/turnover.html node --test

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

import { launch, pageUrl, shotDir, isLocal, openWatched } from './harness.mjs';

const here = dirname(fileURLToPath(import.meta.url));

let context;
let browser;
let external = [];

before(async () => {
  browser = await launch('dose', { acceptDownloads: true });
  context = browser.context;
  external = browser.external;
});

after(async () => {
  if (browser) await browser.close();
});

const openPage = () => openWatched(context);

async function inked(page, id) {
  return page.evaluate((canvasId) => {
    const canvas = document.getElementById(canvasId);
    const data = canvas.getContext('2d').getImageData(0, 0, canvas.width, canvas.height).data;
    let count = 0;
    for (let k = 0; k < data.length; k += 4) if (!(data[k] > 245 && data[k + 1] > 245 && data[k + 2] > 245)) count += 1;
    return count;
  }, id);
}

// Waits until the dose result differs from `before` (compared by JSON).
async function nextDoseResult(page, before) {
  await page.waitForFunction((old) => {
    const r = window.turnover.dose.lastResult();
    return r && JSON.stringify(r.fit.parameters) !== old;
  }, before, { timeout: 20_000 });
  return page.evaluate(() => window.turnover.dose.lastResult());
}

async function loadDoseDemo(page) {
  await page.click('#load-dose-demo');
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#dose-status')?.dataset.state),
    null, { timeout: 20_000 });
}

// Clicks the `index`-th point of the dose-response plot; returns its position record.
async function clickDosePoint(page, index) {
  await page.locator('#plot-dose').scrollIntoViewIfNeeded();
  const target = (await page.evaluate(() => window.turnover.dose.pointPositions()))[index];
  const box = await (await page.$('#plot-dose')).boundingBox();
  await page.mouse.click(box.x + target.x, box.y + target.y);
  return target;
}

const paramRows = (page) => page.$$eval('#dose-parameters tbody tr',
  (rows) => Object.fromEntries(rows.map((r) => [r.dataset.param, { value: Number(r.dataset.value), se: Number(r.dataset.se), derived: r.classList.contains('derived') }])));

test('dose-response demo: IC50 with intervals and a drawn log-axis plot with the IC50 marked', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  assert.equal(await page.isHidden('#dose-results'), true, 'the section stays quiet with no table of its own');
  await loadDoseDemo(page);
  assert.equal(await page.isVisible('#dose-results'), true);

  const rows = await paramRows(page);
  assert.deepEqual(Object.keys(rows), ['floor', 'ceiling', 'IC50', 'steepness']);
  // The demo was made from the Morrison equation with Ki_app = 0.5 µM and
  // [E]t = 0.2 µM, whose half-inhibition point is Ki_app + [E]t/2 = 0.6 µM
  // (Morrison 1969, the relation from memory); the logistic's IC50 must be
  // near it.
  assert.ok(rows.IC50.value > 0.5 && rows.IC50.value < 0.7, `IC50 ${rows.IC50.value}`);
  assert.ok(rows.IC50.se > 0 && rows.IC50.se < 0.2 * rows.IC50.value);
  const fit = await page.evaluate(() => window.turnover.dose.lastResult().fit);
  const ic50 = fit.parameters.find((p) => p.name === 'IC50');
  assert.equal(ic50.unit, 'µM');
  assert.ok(ic50.ci_low < ic50.value && ic50.value < ic50.ci_high);
  assert.match(await page.textContent('#dose-ci-heading'), /95% interval \(asymptotic\)/);

  const plot = await page.evaluate(() => window.turnover.dose.lastResult().plots[0]);
  assert.equal(plot.kind, 'dose-response');
  assert.equal(plot.log_x, true);
  assert.equal(plot.marks.length, 1);
  assert.equal(plot.marks[0].x, ic50.value, 'the marker sits at the fitted IC50');
  assert.equal(await page.getAttribute('#plot-dose', 'data-drawn'), 'yes');
  assert.ok((await inked(page, 'plot-dose')) > 3000);
  // Points at [I] = 0 cannot sit on a log axis: 18 of the 20 are drawn.
  const drawn = await page.evaluate(() => window.turnover.dose.pointPositions().length);
  assert.equal(drawn, 18);

  // The interval choice of the rate panel applies here.
  const before = JSON.stringify(fit.parameters);
  await page.selectOption('#interval-method', 'profile');
  const profiled = await nextDoseResult(page, before);
  assert.ok(profiled.fit.parameters.every((p) => p.ci_method === 'profile'));

  // Fixing the plateaus removes them from the fitted parameters.
  await page.check('#dose-fix-top');
  await page.check('#dose-fix-bottom');
  await page.waitForFunction(() => window.turnover.dose.lastResult()?.fit.parameters.length === 2, null, { timeout: 20_000 });
  assert.deepEqual(Object.keys(await paramRows(page)), ['IC50', 'steepness']);
  await page.fill('#dose-top', 'abc');
  await page.waitForFunction(() => document.querySelector('#dose-status').dataset.state === 'error', null, { timeout: 10_000 });
  assert.match(await page.textContent('#dose-status'), /Fixed ceiling: expected a number, found 'abc'/);

  const panel = await page.$('#dose-panel');
  await page.fill('#dose-top', '100');
  await page.uncheck('#dose-fix-top');
  await page.uncheck('#dose-fix-bottom');
  await page.selectOption('#interval-method', 'asymptotic');
  await page.waitForFunction(() => window.turnover.dose.lastResult()?.fit.parameters.length === 4, null, { timeout: 20_000 });
  await panel.screenshot({ path: join(shotDir, 'dose-panel.png') });
  assert.deepEqual(errors, []);
  assert.deepEqual(external, []);
  await page.close();
});

test('a dose table pasted into the rate input moves to the dose-response section; no Michaelis-Menten fit of it is shown', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  const own = '[I] (nM)\t% activity\n0\t99\n1\t92\n3\t77\n10\t49\n30\t23\n100\t9\n300\t3\n';
  // A person's own rate table first, so the demo has left.
  const mine = '[S] (µM)\tv (nM/s)\n5\t2.0\n10\t3.5\n20\t5.4\n50\t8.1\n100\t9.5\n';
  await page.fill('#data-input', mine);
  await page.fill('#data-input', own);
  assert.equal(await page.inputValue('#dose-input'), own);
  assert.equal(await page.inputValue('#data-input'), mine, 'the rate input keeps what it had');
  assert.match(await page.textContent('#rates-move-note'), /dose-response series .* now in the dose-response section/);
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#dose-status')?.dataset.state), null, { timeout: 20_000 });
  const fit = await page.evaluate(() => window.turnover.dose.lastResult().fit);
  assert.equal(fit.n, 7);
  // The rate section never fitted the dose table.
  const rateFit = await page.evaluate(() => window.turnover.lastResult());
  assert.deepEqual(rateFit.points.map((p) => p.s), [5, 10, 20, 50, 100], 'the rate fit is of the rate table, never of the dose table');
  // Undo takes the move back in one step.
  await page.click('#plots-heading');
  await page.keyboard.press('Control+z');
  assert.equal(await page.inputValue('#dose-input'), '');
  assert.equal(await page.inputValue('#data-input'), mine);
  assert.deepEqual(errors, []);
  await page.close();
});

test('Cheng-Prusoff: competitive Ki = IC50/(1 + [S]/Km) on the page’s own IC50', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await loadDoseDemo(page);
  const rows = await paramRows(page);
  await page.selectOption('#dose-cp-mechanism', 'competitive');
  // A mechanism without [S] and Km asks for them; it does not guess.
  await page.waitForFunction(() => /Enter the assay/.test(document.querySelector('#dose-ki').textContent), null, { timeout: 10_000 });
  await page.fill('#dose-cp-substrate', '40');
  await page.fill('#dose-cp-km', '20');
  await page.waitForFunction(() => document.querySelector('#dose-ki').dataset.value !== undefined, null, { timeout: 20_000 });
  const ki = Number(await page.getAttribute('#dose-ki', 'data-value'));
  const kiSe = Number(await page.getAttribute('#dose-ki', 'data-se'));
  // Cheng & Prusoff (1973), competitive: Ki = IC50/(1 + [S]/Km), here
  // IC50/3; the standard error scales the same way with Km exact.
  const expected = rows.IC50.value / (1 + 40 / 20);
  assert.ok(Math.abs(ki - expected) <= 1e-12 * expected, `Ki ${ki} vs ${expected}`);
  assert.ok(Math.abs(kiSe - rows.IC50.se / 3) <= 1e-12 * kiSe, `SE ${kiSe}`);
  assert.match(await page.textContent('#dose-ki'), /^Ki = [\d.]+ ± [\d.]+ µM/);
  const table = await paramRows(page);
  assert.equal(table.Ki.derived, true);
  assert.equal(table.Ki.value, ki);

  // A Km error makes Ki less certain; uncompetitive uses 1 + Km/[S].
  await page.fill('#dose-cp-km-se', '2');
  await page.waitForFunction((se) => Number(document.querySelector('#dose-ki').dataset.se) > se, kiSe, { timeout: 20_000 });
  await page.selectOption('#dose-cp-mechanism', 'uncompetitive');
  const unExpected = rows.IC50.value / (1 + 20 / 40);
  await page.waitForFunction((v) => Math.abs(Number(document.querySelector('#dose-ki').dataset.value) - v) <= 1e-12 * v, unExpected, { timeout: 20_000 });

  // Unreadable input is named, not dropped.
  await page.fill('#dose-cp-km', '2O');
  await page.waitForFunction(() => /Km: expected a number, found '2O'/.test(document.querySelector('#dose-ki').textContent), null, { timeout: 10_000 });
  assert.deepEqual(errors, []);
  assert.deepEqual(external, []);
  await page.close();
});

test('Morrison mode: v0, Ki_app, both curves, and the tight-binding warning only when it applies', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await loadDoseDemo(page);
  await page.selectOption('#dose-model', 'morrison');
  await page.waitForFunction(() => window.turnover.dose.lastResult()?.fit.model === 'morrison', null, { timeout: 20_000 });
  assert.deepEqual(Object.keys(await paramRows(page)), ['v0', 'Ki_app']);
  const fit = await page.evaluate(() => window.turnover.dose.lastResult().fit);
  const kiApp = fit.parameters[1].value;
  // The demo was made with Ki_app = 0.5 µM at [E]t = 0.2 µM (invented).
  assert.ok(kiApp > 0.4 && kiApp < 0.6, `Ki_app ${kiApp}`);
  const warnings = await page.$$eval('#dose-warnings li', (items) => items.map((i) => i.textContent));
  assert.ok(warnings.some((w) => /below 10×\[E\]t/.test(w)), warnings.join(' | '));
  const plot = await page.evaluate(() => window.turnover.dose.lastResult().plots[0]);
  assert.equal(plot.kind, 'morrison');
  assert.deepEqual(plot.series.map((s) => s.dashed), [false, true], 'Morrison fit solid, classical hyperbola dashed');
  assert.ok((await inked(page, 'plot-dose')) > 3000);
  assert.match(await page.textContent('#dose-ki'), /classical IC50 only/);
  await (await page.$('#dose-panel')).screenshot({ path: join(shotDir, 'dose-morrison.png') });

  // With little enzyme (Ki_app ≫ 10×[E]t) there is no warning.
  await page.fill('#dose-enzyme', '0.001');
  await page.waitForFunction(() => {
    const r = window.turnover.dose.lastResult();
    return r && r.fit.model === 'morrison' && !r.fit.warnings.some((w) => w.includes('10×[E]t'));
  }, null, { timeout: 20_000 });
  assert.equal(await page.$$eval('#dose-warnings li', (items) => items.filter((i) => /10×\[E\]t/.test(i.textContent)).length), 0);
  // No [E]t: asked for, not guessed.
  await page.fill('#dose-enzyme', '');
  await page.waitForFunction(() => document.querySelector('#dose-status').dataset.state === 'error', null, { timeout: 10_000 });
  assert.match(await page.textContent('#dose-status'), /Enter \[E\]t/);
  assert.deepEqual(errors, []);
  await page.close();
});

test('rates per second in the dose-response section: % activity is refused with the reason, rates are converted (v0 ÷ 60, Ki_app unchanged)', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await loadDoseDemo(page);
  await page.selectOption('#dose-rate-time', 's');
  await page.waitForFunction(() => document.querySelector('#dose-status').dataset.state === 'error', null, { timeout: 10_000 });
  assert.match(await page.textContent('#dose-status'), /responses per s need responses that are rates.*names no unit/);
  // Invented tight-binding rates ([E]t = 10 nM, Ki_app 2 nM, v0 5 µM/min).
  const rows = ['[I] (nM)\tv (µM/min)'];
  for (const i of [0, 1, 2, 5, 10, 15, 20, 30, 50]) {
    const b = 10 + i + 2;
    rows.push(`${i}\t${(5 * (1 - (b - Math.sqrt(b * b - 40 * i)) / 20)).toFixed(4)}`);
  }
  await page.selectOption('#dose-rate-time', '');
  await page.fill('#dose-input', `${rows.join('\n')}\n`);
  await page.selectOption('#dose-model', 'morrison');
  await page.fill('#dose-enzyme', '10');
  await page.waitForFunction(() => window.turnover.dose.lastResult()?.fit.model === 'morrison', null, { timeout: 20_000 });
  const perMinute = await page.evaluate(() => window.turnover.dose.lastResult().fit.parameters);
  await page.selectOption('#dose-rate-time', 's');
  await page.waitForFunction(() => window.turnover.dose.lastResult()?.fit.parameters[0].unit === 'µM/s', null, { timeout: 20_000 });
  const perSecond = await page.evaluate(() => window.turnover.dose.lastResult().fit.parameters);
  // Within a millionth of the SE (the solver stops at its own test on
  // numbers 60 times apart).
  assert.ok(Math.abs(perSecond[0].value - perMinute[0].value / 60) <= 1e-6 * perSecond[0].std_error, `v0 ${perSecond[0].value}`);
  assert.ok(Math.abs(perSecond[1].value - perMinute[1].value) <= 1e-6 * perSecond[1].std_error, `Ki_app ${perSecond[1].value}`);
  assert.deepEqual(errors, []);
  await page.close();
});

test('a click on a dose-response point leaves it out and refits', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await loadDoseDemo(page);
  const before = await page.evaluate(() => window.turnover.dose.lastResult());
  const target = await clickDosePoint(page, 6);
  const after = await nextDoseResult(page, JSON.stringify(before.fit.parameters));
  assert.equal(after.fit.n, before.fit.n - 1);
  assert.deepEqual(after.points.filter((p) => p.excluded).map((p) => p.row), [target.row]);
  assert.deepEqual(errors, []);
  await page.close();
});

test('a saved page keeps the dose-response points that were clicked out', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await loadDoseDemo(page);
  const before = await page.evaluate(() => window.turnover.dose.lastResult());
  const target = await clickDosePoint(page, 6);
  const after = await nextDoseResult(page, JSON.stringify(before.fit.parameters));
  const [download] = await Promise.all([page.waitForEvent('download'), page.locator('button#save-page').click()]);
  const savedPath = join(shotDir, 'saved-dose-page.html');
  await download.saveAs(savedPath);
  const reopened = await context.newPage();
  await reopened.goto(pathToFileURL(savedPath).href, { waitUntil: 'load' });
  await reopened.waitForFunction(() => window.turnover?.dose?.lastResult(), null, { timeout: 20_000 });
  const restored = await reopened.evaluate(() => window.turnover.dose.lastResult());
  assert.deepEqual(restored.points.filter((p) => p.excluded).map((p) => p.row), [target.row], 'the left-out point stays out');
  assert.deepEqual(restored.fit.parameters, after.fit.parameters, 'and the fit is the same');
  await reopened.close();
  assert.deepEqual(errors, []);
  await page.close();
});

test('copied results include the inhibitor-series and dose-response sections', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await page.click('#load-inhibition-demo');
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#inhibition-status')?.dataset.state), null, { timeout: 20_000 });
  const text = await page.evaluate(() => window.turnover.resultsText());
  const verdict = await page.evaluate(() => window.turnover.inhibition.lastResult().comparison.verdict);
  assert.ok(text.includes(`# verdict: ${verdict}`), text);
  const kic = await page.evaluate(() => {
    const r = window.turnover.inhibition.lastResult();
    const fit = r.fits.find((f) => f.model === r.shown) ?? r.fits[0];
    return fit.parameters[0];
  });
  assert.ok(text.split('\n').some((line) => line.startsWith(`${kic.name}\t${kic.value}\t`)), 'the constants are copied at full precision');
  assert.match(text, /These constants are statistical estimates/);
  assert.deepEqual(errors, []);
  await page.close();
});

test('inhibitor-series plots: a point click leaves that one rate out, changes the constants, and a second click restores them; SVG download', { timeout: 90_000 }, async () => {
  const { page, errors } = await openPage();
  await page.click('#load-inhibition-demo');
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#inhibition-status')?.dataset.state), null, { timeout: 20_000 });
  const first = await page.evaluate(() => window.turnover.inhibition.lastResult());
  const constants = (r) => r.fits.map((f) => f.parameters.map((p) => p.value));
  await page.locator('#plot-dixon').scrollIntoViewIfNeeded();
  const positions = await page.evaluate(() => window.turnover.inhibition.pointPositions('dixon'));
  assert.ok(positions.length > 40, `${positions.length} points on the Dixon plot`);
  // A point well inside the plot: the highest [I] at the lowest [S].
  const target = positions.reduce((a, b) => (b.y < a.y ? b : a));
  const box = await (await page.$('#plot-dixon')).boundingBox();
  await page.mouse.click(box.x + target.x, box.y + target.y);
  await page.waitForFunction((n) => window.turnover.inhibition.lastResult()?.points.filter((p) => p.excluded).length === n, 1, { timeout: 20_000 });
  const second = await page.evaluate(() => window.turnover.inhibition.lastResult());
  const out = second.points.filter((p) => p.excluded);
  // In the matrix demo one click is one cell, not the whole line.
  assert.equal(out.length, 1);
  assert.equal(out[0].row, target.row);
  assert.equal(second.fits[0].n, first.fits[0].n - 1);
  assert.notDeepEqual(constants(second), constants(first));
  // Drawn as an open ring: the excluded point's place is not teal-filled.
  const ringed = await page.evaluate(() => window.turnover.inhibition.lastResult().plots.find((p) => p.kind === 'dixon').series.some((s) => s.points.some((p) => p.excluded)));
  assert.ok(ringed);
  const back = (await page.evaluate(() => window.turnover.inhibition.pointPositions('dixon'))).find((p) => p.row === target.row);
  const box2 = await (await page.$('#plot-dixon')).boundingBox();
  await page.mouse.click(box2.x + back.x, box2.y + back.y);
  await page.waitForFunction(() => window.turnover.inhibition.lastResult()?.points.every((p) => !p.excluded), null, { timeout: 20_000 });
  const third = await page.evaluate(() => window.turnover.inhibition.lastResult());
  assert.deepEqual(constants(third), constants(first));

  const [download] = await Promise.all([
    page.waitForEvent('download', { timeout: 10_000 }),
    page.click('button.inhibition-svg[data-kind="dixon"]'),
  ]);
  // Named after the analysis and the plot.
  assert.match(download.suggestedFilename(), /^turnover-Demo-Hyd-3-.*-dixon\.svg$/);
  const svg = readFileSync(await download.path(), 'utf8');
  assert.match(svg, /<svg[\s\S]*<\/svg>/);
  assert.equal((await page.$$('button.inhibition-svg')).length, 8);
  assert.deepEqual(errors, []);
  assert.deepEqual(external, []);
  await page.close();
});
