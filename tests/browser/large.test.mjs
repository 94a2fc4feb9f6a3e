// A long rate table is fitted in a Web Worker of its own: the page shows a
// running clock and Stop while it runs, the constants are the command
// line's for the same table, the plots are drawn thinned with a note, and
// Stop leaves no constants on show until Fit runs it again.
//
// Data: invented (Michaelis-Menten with Vmax 10 µM/min, Km 20 µM and ±2.5%
// uniform noise from a fixed linear congruential sequence, seed 7), not
// measurements.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execFileSync } from 'node:child_process';

import { launch, openWatched, shotDir } from './harness.mjs';

const here = dirname(fileURLToPath(import.meta.url));
const bin = resolve(process.env.TURNOVER_BIN ?? join(here, '..', '..', 'target', 'release', 'turnover'));

let browser;
before(async () => { browser = await launch('large'); });
after(async () => { if (browser) await browser.close(); });

function table(rows) {
  let seed = 7;
  const uniform = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
  const lines = ['[S] (µM)\tv (µM/min)'];
  for (let k = 0; k < rows; k++) {
    const s = 1 + 199 * uniform();
    lines.push(`${s.toFixed(3)}\t${((10 * s) / (20 + s) * (1 + 0.05 * (uniform() - 0.5))).toFixed(4)}`);
  }
  return `${lines.join('\n')}\n`;
}

const ROWS = 30_000;

// The page's WebAssembly and the native command line run the same core;
// their maths libraries differ in the last bits, and the solver stops at
// its own test: equal to 1e-9 relative, or within 1e-6 of the standard
// error for a constant near zero (such as a floor of 0 % activity).
const agree = (page, native, se) => Math.abs(page - native) <= Math.max(1e-9 * Math.abs(native), 1e-6 * (se ?? 0));

// Typed into the table box as one paste (page.fill types into the box as
// an editor would, which takes minutes for a table this long).
const paste = (page, text) => page.evaluate((t) => {
  const input = document.querySelector('#data-input');
  input.value = t;
  input.dispatchEvent(new Event('input', { bubbles: true }));
}, text);

test('a 30,000-row rate table is fitted in the background with a clock and Stop, equal to the command line', { timeout: 120_000 }, async () => {
  const text = table(ROWS);
  const file = join(mkdtempSync(join(tmpdir(), 'turnover-large-')), 'rows.tsv');
  writeFileSync(file, text);
  const cli = JSON.parse(execFileSync(bin, ['fit', file, '--json', '--points'], { maxBuffer: 1 << 28 }).toString());

  const { page, errors } = await openWatched(browser.context);
  await paste(page, text);
  // Fit: the analysis starts in the background; the call returns at once.
  const started = await page.evaluate(() => {
    window.turnover.analyse();
    return {
      busy: !document.querySelector('#rates-busy').hidden,
      clock: document.querySelector('#rates-busy-text').textContent,
      result: window.turnover.lastResult(),
      // Stopped in the same page task, so the fit cannot finish first.
      stopped: (document.querySelector('#rates-stop').click(), true),
    };
  });
  assert.ok(started.busy, 'the running line is shown');
  assert.match(started.clock, /Fitting a 30,001-line table in the background: \d+ s so far/);
  assert.equal(started.result, null, 'no result (old or new) while the fit runs');

  // Stop: no constants; the section says so; Fit runs it again.
  const stopped = await page.evaluate(() => ({
    busy: !document.querySelector('#rates-busy').hidden,
    status: document.querySelector('#status').textContent,
    rows: document.querySelectorAll('#parameters tr[data-param]').length,
    result: window.turnover.lastResult(),
  }));
  assert.equal(stopped.busy, false);
  assert.match(stopped.status, /^Stopped: .*Press Fit to run it again\./);
  assert.equal(stopped.rows, 0, 'no constants on show after Stop');
  assert.equal(stopped.result, null);

  await page.click('#analyse');
  await page.waitForFunction(() => window.turnover.lastResult(), null, { timeout: 90_000 });
  const shown = await page.evaluate(() => {
    const r = window.turnover.lastResult();
    return {
      params: r.fit.parameters.map((p) => ({ name: p.name, value: p.value, se: p.std_error })),
      n: r.fit.n,
      notes: r.plots.map((p) => `${p.kind}: ${p.note}`),
      table: Object.fromEntries([...document.querySelectorAll('#parameters tr[data-param]')].map((row) => [row.dataset.param, Number(row.dataset.value)])),
      busy: !document.querySelector('#rates-busy').hidden,
      drawn: [...document.querySelectorAll('#plots-panel canvas')].every((c) => c.getContext('2d').getImageData(0, 0, c.width, c.height).data.some((x, i) => i % 4 !== 3 && x < 200)),
    };
  });
  assert.equal(shown.busy, false);
  assert.equal(shown.n, ROWS);
  // The same core on the same table: equal to the command line's numbers
  // (the WebAssembly's libm may differ from the host's in the last bits).
  for (const p of cli.parameters) {
    const q = shown.params.find((x) => x.name === p.name);
    assert.ok(Math.abs(q.value - p.value) <= 1e-9 * Math.abs(p.value), `${p.name}: page ${q.value}, command line ${p.value}`);
    assert.ok(Math.abs(q.se - p.std_error) <= 1e-6 * p.std_error, `SE(${p.name}): page ${q.se}, command line ${p.std_error}`);
    assert.equal(shown.table[p.name], q.value, `${p.name} shown in the table`);
  }
  assert.ok(shown.notes.some((n) => /^direct: .*Drawn thinned: [\d,]+ of 30,000 points/.test(n)), shown.notes.join('\n'));
  assert.ok(shown.notes.some((n) => /^direct-linear: .*Drawn thinned: 1,000 of 30,000 lines/.test(n)), shown.notes.join('\n'));
  assert.ok(shown.drawn, 'every plot canvas has ink');
  await page.screenshot({ path: join(shotDir, 'large-table.png') });

  // The points come back from the worker as columns (PointColumns in
  // www/app.js), not as 30,000 objects: read through the hook they equal
  // the command line's, field by field, with null where it has null (the
  // sd column is empty), not NaN.
  const points = await page.evaluate(() => window.turnover.lastResult().points);
  assert.equal(points.length, cli.points.length);
  for (let k = 0; k < points.length; k++) {
    const [q, p] = [points[k], cli.points[k]];
    assert.deepEqual(Object.keys(q), Object.keys(p), `point ${k}: fields`);
    for (const key of Object.keys(p)) {
      const [a, b] = [q[key], p[key]];
      if (typeof b === 'number' && !Number.isInteger(b)) assert.ok(Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(b)), `point ${k} ${key}: page ${a}, command line ${b}`);
      else assert.equal(a, b, `point ${k} ${key}`);
    }
  }
  assert.ok(points.every((q) => q.sd === null));

  // An edit while it runs: the old run is dropped, the new table is fitted.
  await paste(page, table(ROWS).replace(/\n[^\n]*\n$/, '\n'));
  await page.evaluate(() => window.turnover.analyse());
  await page.waitForFunction(() => window.turnover.lastResult()?.fit.n === 29_999, null, { timeout: 90_000 });

  // A click on a drawn point of the long table's plot leaves that point
  // out (the point is read from the columns by its row).
  const target = (await page.evaluate(() => window.turnover.pointPositions('direct')))[0];
  const canvas = page.locator('#plot-direct');
  await canvas.scrollIntoViewIfNeeded();
  const box = await canvas.boundingBox();
  await page.mouse.click(box.x + target.x, box.y + target.y);
  await page.waitForFunction(() => window.turnover.lastResult()?.fit.n === 29_998, null, { timeout: 90_000 });
  const left = await page.evaluate(() => ({
    points: window.turnover.lastResult().points.filter((p) => p.excluded).map((p) => p.line),
    doc: window.turnover.doc().rates.excluded_lines,
  }));
  assert.equal(left.points.length, 1, JSON.stringify(left));
  assert.deepEqual(left.doc, left.points);
  assert.deepEqual(errors, []);
  await page.close();
});

// Invented rates: competitive inhibition with Vmax 10 µM/min, Km 20 µM,
// Kic 3 µM, six [S] by four [I], ±2.5% uniform noise (seed 11).
function inhibitorTable(rows) {
  let seed = 11;
  const uniform = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
  const S = [2, 5, 10, 20, 50, 100];
  const I = [0, 1, 3, 10];
  const lines = ['[S] (µM)\t[I] (µM)\tv (µM/min)'];
  for (let k = 0; k < rows; k++) {
    const s = S[k % 6];
    const i = I[Math.floor(k / 6) % 4];
    lines.push(`${s}\t${i}\t${((10 * s) / (20 * (1 + i / 3) + s) * (1 + 0.05 * (uniform() - 0.5))).toFixed(4)}`);
  }
  return `${lines.join('\n')}\n`;
}

test('a 2,400-line inhibitor series is fitted in the background with Stop and Fit it again, equal to the command line', { timeout: 120_000 }, async () => {
  const text = inhibitorTable(2400);
  const { page, errors } = await openWatched(browser.context);
  await page.evaluate((t) => {
    const input = document.querySelector('#inhibition-input');
    input.value = t;
    input.dispatchEvent(new Event('input', { bubbles: true }));
  }, text);
  // Started and stopped in one page task, so the fit cannot finish in
  // between (lastResult() brings the section up to date, which starts it).
  const running = await page.evaluate(() => {
    const result = window.turnover.inhibition.lastResult();
    const busy = !document.querySelector('#inhibition-busy').hidden;
    const clock = document.querySelector('#inhibition-busy-text').textContent;
    document.querySelector('#inhibition-stop').click();
    return { result, busy, clock };
  });
  assert.equal(running.busy, true, 'the running line is shown');
  assert.match(running.clock, /^Fitting every mechanism to a 2,401-line table in the background: \d+ s so far/);
  assert.equal(running.result, null, 'no result while it runs');
  assert.match(await page.textContent('#inhibition-status'), /^Stopped: /);
  assert.equal(await page.isVisible('#inhibition-rerun button'), true);
  assert.equal(await page.evaluate(() => document.querySelectorAll('#inhibition-parameters tbody tr').length), 0);
  await page.click('#inhibition-rerun button');
  await page.waitForFunction(() => window.turnover.inhibition.lastResult(), null, { timeout: 90_000 });
  const shown = await page.evaluate(() => {
    const r = window.turnover.inhibition.lastResult();
    const fit = r.fits.find((f) => f.model === r.shown);
    return { model: r.shown, params: fit.parameters.map((p) => ({ name: p.name, value: p.value })), notes: r.plots.map((p) => p.note), rerun: !document.querySelector('#inhibition-rerun').hidden };
  });
  assert.equal(shown.rerun, false);
  const file = join(mkdtempSync(join(tmpdir(), 'turnover-large-')), 'series.tsv');
  writeFileSync(file, text);
  const cli = JSON.parse(execFileSync(bin, ['fit', file, '--model', shown.model, '--json'], { maxBuffer: 1 << 28 }).toString());
  for (const p of cli.parameters) {
    const q = shown.params.find((x) => x.name === p.name);
    assert.ok(q && agree(q.value, p.value, p.std_error), `${p.name}: page ${q?.value}, command line ${p.value} ± ${p.std_error}`);
  }
  // 2,400 points are under the 5,000 above which a plot is thinned.
  assert.ok(shown.notes.every((n) => !/thinned/.test(n)), shown.notes.join('\n'));
  assert.deepEqual(errors, []);
  await page.close();
});

// Invented responses: a logistic with IC50 0.5 µM, slope 1, plateaus 100
// and 0 % activity, eight [I] levels, ±1.5 % uniform noise (seed 5).
function doseTable(rows) {
  let seed = 5;
  const uniform = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
  const I = [0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30];
  const lines = ['[I] (µM)\tactivity (%)'];
  for (let k = 0; k < rows; k++) {
    const i = I[k % 8];
    lines.push(`${i}\t${(100 / (1 + i / 0.5) + 3 * (uniform() - 0.5)).toFixed(3)}`);
  }
  return `${lines.join('\n')}\n`;
}

test('a 6,000-line dose-response series is fitted in the background with Stop and Fit it again, equal to the command line', { timeout: 120_000 }, async () => {
  const text = doseTable(6000);
  const { page, errors } = await openWatched(browser.context);
  await page.evaluate((t) => {
    const input = document.querySelector('#dose-input');
    input.value = t;
    input.dispatchEvent(new Event('input', { bubbles: true }));
  }, text);
  // Started and stopped in one page task, so the fit cannot finish in
  // between (lastResult() brings the section up to date, which starts it).
  const running = await page.evaluate(() => {
    const result = window.turnover.dose.lastResult();
    const busy = !document.querySelector('#dose-busy').hidden;
    const clock = document.querySelector('#dose-busy-text').textContent;
    document.querySelector('#dose-stop').click();
    return { result, busy, clock };
  });
  assert.equal(running.busy, true, 'the running line is shown');
  assert.match(running.clock, /^Fitting a 6,001-line series in the background: \d+ s so far/);
  assert.equal(running.result, null, 'no result while it runs');
  assert.match(await page.textContent('#dose-status'), /^Stopped: /);
  assert.equal(await page.evaluate(() => document.querySelectorAll('#dose-parameters tbody tr').length), 0);
  await page.click('#dose-rerun button');
  await page.waitForFunction(() => window.turnover.dose.lastResult(), null, { timeout: 90_000 });
  const shown = await page.evaluate(() => {
    const r = window.turnover.dose.lastResult();
    return { params: r.fit.parameters.map((p) => ({ name: p.name, value: p.value })), note: r.plots[0].note, drawn: document.querySelector('#plot-dose').dataset.drawn };
  });
  const file = join(mkdtempSync(join(tmpdir(), 'turnover-large-')), 'dose.tsv');
  writeFileSync(file, text);
  const cli = JSON.parse(execFileSync(bin, ['fit', file, '--model', 'ic50', '--json'], { maxBuffer: 1 << 28 }).toString());
  for (const p of cli.parameters) {
    const q = shown.params.find((x) => x.name === p.name);
    assert.ok(q && agree(q.value, p.value, p.std_error), `${p.name}: page ${q?.value}, command line ${p.value} ± ${p.std_error}`);
  }
  assert.match(shown.note, /Drawn thinned: [\d,]+ of 6,000 points/);
  assert.deepEqual(errors, []);
  await page.close();
});
