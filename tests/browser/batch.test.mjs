// Browser tests for the many-curves section of dist/turnover.html: a
// screen of 384 dose-response curves pasted at once is fitted a few curves
// per task (no main-thread task over 100 ms, measured by the browser's
// PerformanceObserver "longtask" entries), the results table holds one row
// per curve with the core's numbers and flags, the run can be stopped, and
// a plate with controls gives Z′ as computed by hand. Headless Debian
// Chromium from file://, every non-local request refused.
//
// Run:  cd tests/browser && TURNOVER_HTML=../../dist/turnover.html node --test batch.test.mjs

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';

import { launch, pageUrl, shotDir, openWatched } from './harness.mjs';

let browser;
before(async () => { browser = await launch('batch', { acceptDownloads: true }); });
after(async () => { if (browser) await browser.close(); });

const openPage = () => openWatched(browser.context);

/** A simulated screen (invented, known truth): 384 compounds, ten doses
 *  from 1 nM to 30 µM, the logistic with IC50 = 10^(−2 + 3·k/383) µM and
 *  Hill slope 1, % activity with Gaussian noise of SD 3 from a seeded
 *  generator (SplitMix-like, seed 384). Every 50th compound is inactive. */
function screen() {
  let state = 384n;
  const mask = (1n << 64n) - 1n;
  const next = () => {
    state = (state + 0x9e3779b97f4a7c15n) & mask;
    let z = state;
    z = ((z ^ (z >> 30n)) * 0xbf58476d1ce4e5b9n) & mask;
    z = ((z ^ (z >> 27n)) * 0x94d049bb133111ebn) & mask;
    return Number((z ^ (z >> 31n)) >> 11n) / 2 ** 53;
  };
  const normal = () => Math.sqrt(-2 * Math.log(1 - next())) * Math.cos(2 * Math.PI * next());
  const doses = [0.001, 0.003, 0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30];
  const lines = ['compound\t[I] (µM)\t% activity'];
  const truth = [];
  for (let k = 0; k < 384; k++) {
    const ic50 = k % 50 === 49 ? null : 10 ** (-2 + (3 * k) / 383);
    truth.push(ic50);
    for (const i of doses) {
      const y = ic50 === null ? 100 : 100 / (1 + i / ic50);
      lines.push(`C${String(k + 1).padStart(3, '0')}\t${i}\t${(y + 3 * normal()).toFixed(2)}`);
    }
  }
  return { text: `${lines.join('\n')}\n`, truth };
}

test('384 curves pasted at once: fitted without a main-thread task over 100 ms, one row per curve, the inactive ones flagged', { timeout: 180_000 }, async () => {
  const { page, errors } = await openPage();
  const { text, truth } = screen();
  // The paste itself: the browser lays out 3,841 lines in the text box (about
  // 70 ms on an idle machine, the browser's work, not Turnover's). The long
  // tasks are counted from the next frame on, which covers every fit: the
  // section starts 350 ms after typing stops.
  await page.evaluate((t) => {
    const input = document.querySelector('#batch-input');
    input.value = t;
    input.dispatchEvent(new Event('input', { bubbles: true }));
  }, text);
  await page.evaluate(() => new Promise((resolve) => requestAnimationFrame(() => setTimeout(() => {
    window.longTasks = [];
    new PerformanceObserver((list) => { for (const e of list.getEntries()) window.longTasks.push(e.duration); }).observe({ type: 'longtask' });
    resolve();
  }, 0))));
  assert.equal(await page.evaluate(() => window.turnover.batch.running() || window.turnover.batch.results() !== null), false, 'the fits start after the observer');
  await page.waitForFunction(() => window.turnover.batch.results() !== null, null, { timeout: 150_000 });
  const results = await page.evaluate(() => window.turnover.batch.results());
  assert.equal(results.length, 384);
  const long = await page.evaluate(() => window.longTasks);
  assert.deepEqual(long.filter((d) => d > 100), [], `main-thread tasks over 100 ms: ${long.join(', ')}`);
  // The inactive compounds are flagged; the IC50 of the active ones is near
  // the truth (median absolute log10 error well under 0.1 at 3 % noise).
  const errorsLog = [];
  results.forEach((c, k) => {
    if (truth[k] === null) assert.ok(c.flags.length > 0, `${c.curve} is inactive and should be flagged`);
    else {
      const ic50 = c.fit.parameters.find((p) => p.name === 'IC50').value;
      errorsLog.push(Math.abs(Math.log10(ic50 / truth[k])));
    }
  });
  errorsLog.sort((a, b) => a - b);
  assert.ok(errorsLog[Math.floor(errorsLog.length / 2)] < 0.1, `median |log10 error| ${errorsLog[Math.floor(errorsLog.length / 2)]}`);
  const rows = await page.locator('#batch-table tbody tr').count();
  assert.equal(rows, 384);
  // The flag filter shows exactly the flagged curves.
  await page.selectOption('#batch-filter', 'flagged');
  const flagged = results.filter((c) => c.flags.length).length;
  assert.equal(await page.locator('#batch-table tbody tr').count(), flagged);
  await page.locator('#batch-panel').screenshot({ path: join(shotDir, 'batch-384.png') });
  assert.deepEqual(errors, []);
  await page.close();
});

test('many curves: a row equals the one-curve dose-response fit of the same rows; sorting; the run can be stopped', { timeout: 120_000 }, async () => {
  const { page, errors } = await openPage();
  await page.click('#load-batch-demo');
  // The demo's table typed in as a person's own (a demo leaves when a
  // person's table arrives in any section; this one must stay).
  const text = (await page.inputValue('#batch-input')).replace(/^# Demo.*\n/, '');
  await page.fill('#batch-input', text);
  await page.evaluate(() => window.turnover.analyse());
  await page.waitForFunction(() => window.turnover.batch.results() !== null, null, { timeout: 60_000 });
  const results = await page.evaluate(() => window.turnover.batch.results());
  // TX-04's rows, pasted alone into the dose-response section.
  const own = ['[I] (µM)\t% activity', ...text.split('\n').filter((l) => l.startsWith('TX-04\t')).map((l) => l.split('\t').slice(1).join('\t'))].join('\n');
  await page.fill('#dose-input', own);
  await page.evaluate(() => window.turnover.analyse());
  const dose = await page.evaluate(() => window.turnover.dose.lastResult());
  const row = results.find((c) => c.curve === 'TX-04');
  for (const p of dose.fit.parameters) {
    const q = row.fit.parameters.find((x) => x.name === p.name);
    assert.equal(q.value, p.value, `${p.name}: batch ${q.value}, one curve ${p.value}`);
    assert.equal(q.std_error, p.std_error);
  }
  // Sorting by IC50 puts the rows in increasing order.
  await page.click('#batch-table th[data-key="IC50"]');
  const column = await page.$$eval('#batch-table thead th', (ths) => ths.findIndex((th) => th.dataset.key === 'IC50') + 1);
  const sorted = await page.$$eval(`#batch-table tbody tr td:nth-child(${column})`, (cells) => cells.map((c) => Number(c.dataset.value)));
  assert.deepEqual(sorted, [...sorted].sort((a, b) => a - b));
  // Stop: a long table stopped at once keeps what was fitted and says so.
  const big = screen().text;
  await page.evaluate((t) => {
    const input = document.querySelector('#batch-input');
    input.value = t;
    input.dispatchEvent(new Event('input', { bubbles: true }));
    window.turnover.analyse();
    window.turnover.batch.stop();
  }, big);
  await page.waitForFunction(() => !window.turnover.batch.running(), null, { timeout: 60_000 });
  const status = await page.locator('#batch-status').textContent();
  assert.match(status, /Stopped \(on request\) after \d+ of 384 curves/);
  assert.deepEqual(errors, []);
  await page.close();
});

test('many curves: plates normalised to their controls give % activity and Z′ as computed by hand', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  // Invented plate: high controls 1000, 1040, 960, 1000 (mean 1000, SD
  // 32.66); low controls 100, 110, 90, 100 (mean 100, SD 8.165). Z′ = 1 −
  // 3(32.66 + 8.165)/|1000 − 100| = 1 − 122.47/900 = 0.86392 (Zhang, Chung
  // & Oldenburg 1999, the definition of Z′).
  const rows = ['well\trole\tcompound\t[I] (µM)\tsignal'];
  ['1000', '1040', '960', '1000'].forEach((v, k) => rows.push(`H${k}\thigh\t\t\t${v}`));
  ['100', '110', '90', '100'].forEach((v, k) => rows.push(`L${k}\tlow\t\t\t${v}`));
  [0.01, 0.1, 1, 10, 100].forEach((i, k) => rows.push(`S${k}\tsample\tQ-1\t${i}\t${100 + 900 / (1 + i / 1)}`));
  await page.fill('#batch-input', `${rows.join('\n')}\n`);
  await page.fill('#batch-group-by', 'compound');
  await page.check('#batch-normalise');
  await page.evaluate(() => window.turnover.analyse());
  await page.waitForFunction(() => window.turnover.batch.results() !== null, null, { timeout: 30_000 });
  const outline = await page.evaluate(() => window.turnover.batch.outline());
  assert.equal(outline.plates.length, 1);
  const z = outline.plates[0].z_prime;
  const sd = (xs) => { const m = xs.reduce((a, b) => a + b) / xs.length; return Math.sqrt(xs.reduce((a, b) => a + (b - m) ** 2, 0) / (xs.length - 1)); };
  const hand = 1 - (3 * (sd([1000, 1040, 960, 1000]) + sd([100, 110, 90, 100]))) / 900;
  assert.ok(Math.abs(z - hand) < 1e-12, `Z′ ${z}, by hand ${hand}`);
  assert.ok(Math.abs(hand - 0.86392) < 1e-5);
  const shownZ = await page.locator('#batch-plates tbody tr').getAttribute('data-z-prime');
  assert.equal(Number(shownZ), z);
  // % activity of the made-up sample at [I] = IC50 (1 µM): signal 550 is
  // 50 % of the window; the logistic's IC50 comes back as 1 µM.
  const c = (await page.evaluate(() => window.turnover.batch.results()))[0];
  const ic50 = c.fit.parameters.find((p) => p.name === 'IC50').value;
  assert.ok(Math.abs(ic50 - 1) < 1e-6, `IC50 ${ic50}`);
  assert.deepEqual(errors, []);
  await page.close();
});
