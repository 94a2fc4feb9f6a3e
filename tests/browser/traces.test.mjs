// Browser tests for the time-course panel of dist/turnover.html: paste a
// plate, see the small multiples and flags, drag a window, send the rates to
// the Michaelis-Menten fit, fit whole curves, and time a 384-well plate.
//
// Same harness as turnover.test.mjs: Debian's Chromium through playwright-core,
// the page from file://, every non-local request counted and refused.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join, resolve, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';

import { launch, pageUrl, shotDir, isLocal } from './harness.mjs';

const here = dirname(fileURLToPath(import.meta.url));

let context;
let browser;

before(async () => {
  browser = await launch('traces');
  context = browser.context;
});

after(async () => {
  if (browser) await browser.close();
});

async function openPage() {
  const page = await context.newPage();
  const watch = { external: [], errors: [] };
  page.on('request', (req) => { if (!isLocal(req.url())) watch.external.push(req.url()); });
  page.on('console', (msg) => { if (msg.type() === 'error') watch.errors.push(msg.text()); });
  page.on('pageerror', (err) => watch.errors.push(String(err?.stack ?? err)));
  await page.goto(pageUrl, { waitUntil: 'load' });
  await page.waitForFunction(() => window.turnoverTraces?.lastResult() !== null && window.turnoverTraces?.lastResult() !== undefined);
  return { page, watch };
}

// A small invented plate typed as a scientist would paste it: a run
// header, clock times, a temperature column, an overflow mark and a blank.
const PLATE = [
  'Run 12 (invented)',
  'time (min)\tTemp (°C)\tA1\tA2\tA3\tA4\tA5\tH12',
  ...Array.from({ length: 21 }, (_, j) => {
    const t = j * 0.5;
    // Linear rises of 0.01, 0.02, 0.04, 0.08 A/min; A5 rises fast and
    // overflows; H12 is the blank.
    const cells = [0.01, 0.02, 0.04, 0.08].map((k) => (0.05 + k * t + 0.0005 * Math.sin(7 * j)).toFixed(4));
    const fast = 0.05 + 0.6 * t;
    cells.push(fast > 3 ? 'OVRFLW' : fast.toFixed(4));
    cells.push(j === 4 ? '' : (0.05).toFixed(4));
    return [t.toFixed(1), '25.0', ...cells].join('\t');
  }),
].join('\n');
const LAYOUT = 'trace\tS (µM)\trole\nA1\t20\nA2\t50\nA3\t100\nA4\t400\nA5\t800\nH12\t\tblank\n';

test('a pasted plate gives rates, flags and a rate table the fit accepts', async () => {
  const { page, watch } = await openPage();
  await page.fill('#traces-input', PLATE);
  await page.fill('#layout-input', LAYOUT);
  await page.selectOption('#tr-conversion', 'epsilon');
  await page.fill('#tr-epsilon', '6220');
  await page.fill('#tr-path', '1');
  await page.click('#traces-analyse');
  const result = await page.evaluate(() => window.turnoverTraces.lastResult());
  assert.deepEqual(result.traces.map((t) => t.name), ['A1', 'A2', 'A3', 'A4', 'A5', 'H12']);
  // 0.01 A/min over 6220 M⁻¹ cm⁻¹ × 1 cm is 1.6077 µM/min (Beer-Lambert arithmetic).
  const a1 = result.traces[0];
  assert.ok(Math.abs(a1.rate - 0.01 / 6220 * 1e6) <= 3 * a1.rate_se, `A1 rate ${a1.rate} ± ${a1.rate_se}`);
  assert.ok(result.traces[4].flags.includes('over-range'), `A5 flags ${result.traces[4].flags}`);
  assert.ok(result.notes.some((n) => n.includes('temperature')));
  assert.ok(result.problems.some((p) => p.message.includes('OVRFLW')));
  assert.ok(result.problems.some((p) => p.message.includes('empty')));
  // The table shows the flags as words.
  const a5flags = await page.getAttribute('#trace-table tr[data-trace="A5"]', 'data-flags');
  assert.match(a5flags, /over-range/);
  await page.locator('#traces-panel').screenshot({ path: join(shotDir, 'traces-pasted.png') });
  assert.deepEqual(watch.external, []);
  assert.deepEqual(watch.errors, []);
  await page.close();
});

test('the demo plate: small multiples, a dragged window, rates sent to the fit, whole curves', async () => {
  const { page, watch } = await openPage();
  const before = await page.evaluate(() => window.turnoverTraces.lastResult());
  assert.ok(before.traces.length >= 20);
  assert.ok(before.enzyme_checks.length >= 1, 'v against [E] check present');
  // Click a well in the plate view; the large plot follows.
  await page.locator('#plate-grid').scrollIntoViewIfNeeded();
  const box = await page.evaluate(() => window.turnoverTraces.cellBox('A3'));
  const grid = await page.locator('#plate-grid').boundingBox();
  await page.mouse.click(grid.x + box.x, grid.y + box.y);
  assert.match(await page.textContent('#trace-info'), /A3/);
  // Drag across the large plot from 2 to 6 min.
  await page.locator('#trace-detail').scrollIntoViewIfNeeded();
  const detail = await page.locator('#trace-detail').boundingBox();
  const x2 = await page.evaluate(() => window.turnoverTraces.detailX(2));
  const x6 = await page.evaluate(() => window.turnoverTraces.detailX(6));
  const y = detail.y + detail.height / 2;
  await page.mouse.move(detail.x + x2, y);
  await page.mouse.down();
  await page.mouse.move(detail.x + (x2 + x6) / 2, y);
  await page.mouse.move(detail.x + x6, y);
  await page.mouse.up();
  const a3 = (await page.evaluate(() => window.turnoverTraces.lastResult())).traces.find((t) => t.name === 'A3');
  assert.equal(a3.manual_window, true);
  assert.ok(Math.abs(a3.window_start - 2) <= 0.5 && Math.abs(a3.window_end - 6) <= 0.5, `window ${a3.window_start}–${a3.window_end}`);
  await page.locator('#traces-panel').screenshot({ path: join(shotDir, 'traces-demo.png') });
  // Send the rates to the Michaelis-Menten fit.
  await page.click('#traces-send');
  await page.waitForFunction(() => document.querySelector('#parameters tr[data-param="Km"]'));
  const text = await page.inputValue('#data-input');
  assert.match(text, /^\[S\] \(µM\)\tv \(µM\/min\)/);
  const km = Number(await page.getAttribute('#parameters tr[data-param="Km"]', 'data-value'));
  // The demo was simulated with Km = 60 µM.
  assert.ok(km > 30 && km < 120, `Km from sent rates ${km}`);
  await page.click('#traces-progress');
  await page.waitForFunction(() => window.turnoverTraces.lastProgress() !== null);
  const fit = await page.evaluate(() => window.turnoverTraces.lastProgress());
  assert.equal(fit.summary.converged, true);
  const kmWhole = fit.summary.parameters[0];
  assert.equal(kmWhole.name, 'Km');
  assert.ok(Math.abs(kmWhole.value - 60) <= 4 * kmWhole.std_error + 3, `Km whole curves ${kmWhole.value} ± ${kmWhole.std_error}`);
  await page.locator('#traces-panel').screenshot({ path: join(shotDir, 'traces-progress.png') });
  assert.deepEqual(watch.external, []);
  assert.deepEqual(watch.errors, []);
  await page.close();
});

// Not a pass/fail speed test. A 384-well plate of 100 points goes through
// the page's own path (rates, then the whole-curve fit), which sends it to the
// Web Worker. Its time is printed as a ratio to a reference measured in the
// same run on the same page: merely parsing the same table into numbers in
// plain JavaScript. How responsive the page stayed is printed as the longest
// gap between ticks of a 5 ms timer while the work ran. Asserted: the work
// ran in the worker, the progress bar was shown, every well got a rate and
// the fit converged.
test('the time unit: the demo plate (timed in minutes) shown in seconds, rates per second, a window set by hand kept on its place; undo', async () => {
  const { page, watch } = await openPage();
  await page.evaluate(() => window.turnover.dispatch({ type: 'set window', trace: 'A3', start: 2, end: 6 }));
  await page.waitForFunction(() => window.turnoverTraces.lastResult()?.traces.find((t) => t.name === 'A3')?.manual_window === true);
  const perMinute = await page.evaluate(() => window.turnoverTraces.lastResult());
  assert.equal(perMinute.time_unit, 'min');
  await page.selectOption('#tr-report-time', 's');
  await page.waitForFunction(() => window.turnoverTraces.lastResult()?.time_unit === 's', null, { timeout: 30_000 });
  const perSecond = await page.evaluate(() => window.turnoverTraces.lastResult());
  assert.match(perSecond.rate_unit, /\/s$/);
  assert.ok(perSecond.notes.some((n) => n.startsWith('Times converted from min to s (t × 60)')), perSecond.notes.join(' | '));
  // The same windows on the same readings: every rate is the per-minute
  // rate ÷ 60 (to 1e-9: the lines are fitted to times 60 times apart).
  for (const [k, t] of perMinute.traces.entries()) {
    const u = perSecond.traces[k];
    if (t.rate === null) continue;
    assert.ok(Math.abs(u.rate - t.rate / 60) <= 1e-9 * Math.abs(t.rate / 60) + 1e-15, `${t.name}: ${u.rate} against ${t.rate / 60}`);
  }
  const a3 = perSecond.traces.find((t) => t.name === 'A3');
  assert.equal(a3.manual_window, true);
  assert.deepEqual(await page.evaluate(() => window.turnover.doc().traces.windows.A3), [120, 360]);
  assert.ok(a3.window_start >= 120 - 1e-9 && a3.window_end <= 360 + 1e-9, `A3 window ${a3.window_start}–${a3.window_end} s`);
  await page.evaluate(() => window.turnover.undo());
  await page.waitForFunction(() => window.turnoverTraces.lastResult()?.time_unit === 'min', null, { timeout: 30_000 });
  assert.deepEqual(await page.evaluate(() => window.turnover.doc().traces.windows.A3), [2, 6]);
  assert.equal(await page.inputValue('#tr-report-time'), '');
  assert.deepEqual(watch.external, []);
  assert.deepEqual(watch.errors, []);
  await page.close();
});

test('a 384-well plate is analysed in the worker (timing reported as ratios, not asserted)', async () => {
  const { page, watch } = await openPage();
  // Let the page finish starting (its own demo fits and drawings) first:
  // the stall measured below is the plate's, not the page start-up's.
  await page.waitForFunction(() => window.turnoverTraces?.lastResult() && window.turnover?.lastResult(), null, { timeout: 15000 });
  await page.waitForTimeout(500);
  const report = await page.evaluate(async () => {
    const wells = [];
    for (const r of 'ABCDEFGHIJKLMNOP') for (let c = 1; c <= 24; c++) wells.push(`${r}${c}`);
    let seed = 7;
    const u = () => ((seed = (seed * 1664525 + 1013904223) >>> 0) + 0.5) / 4294967296;
    const rows = [`time (s)\t${wells.join('\t')}`];
    for (let j = 0; j < 100; j++) {
      const row = [String(j * 10)];
      wells.forEach((_, k) => {
        const s0 = 5 * 2 ** (k % 8);
        row.push((0.05 + 0.002 * s0 / (50 + s0) * j * 10 * (1 - 0.0005 * j) + 0.001 * (u() - 0.5)).toFixed(5));
      });
      rows.push(row.join('\t'));
    }
    const table = rows.join('\n');
    const layout = ['trace\tS (µM)', ...wells.map((w, k) => `${w}\t${5 * 2 ** (k % 8)}`)].join('\n');
    // Reference: parse the table into numbers, best of five.
    let reference = Infinity;
    let cells = 0;
    for (let rep = 0; rep < 5; rep++) {
      const t0 = performance.now();
      const parsed = table.split('\n').slice(1).map((line) => line.split('\t').map(Number));
      reference = Math.min(reference, performance.now() - t0);
      cells = parsed.length * (parsed[0].length - 1);
    }
    // As a paste would: the text arrives with an input event.
    const put = (id, value, event = 'input') => {
      const el = document.getElementById(id);
      el.value = value;
      el.dispatchEvent(new Event(event, { bubbles: true }));
    };
    put('traces-input', table);
    put('layout-input', layout);
    // The pasted plate is the person's own: the demo plate's ε and path
    // length leave with the demo, so they are typed here.
    put('tr-conversion', 'epsilon', 'change');
    put('tr-epsilon', '6220');
    put('tr-path', '0.6');
    // The browser lays out a 400 kB textarea on its next frame, which by
    // itself holds the page for a few hundred ms (measured here at about
    // 270 ms). That is the browser's cost of showing the pasted text, not
    // the analysis; let it happen before the clock starts.
    await new Promise((resolve) => requestAnimationFrame(() => requestAnimationFrame(resolve)));
    await new Promise((resolve) => setTimeout(resolve, 300));
    // The paste itself starts an analysis (after a pause for typing); let
    // it finish, then time two analyses of the same inputs.
    await window.turnoverTraces.analyse();
    const runs = [];
    for (let rep = 0; rep < 2; rep++) {
      let maxGap = 0;
      let last = performance.now();
      let busySeen = false;
      const timer = setInterval(() => {
        const now = performance.now();
        maxGap = Math.max(maxGap, now - last);
        last = now;
        if (!document.getElementById('traces-busy').hidden) busySeen = true;
      }, 5);
      const t0 = performance.now();
      const result = await window.turnoverTraces.rerun();
      const t1 = performance.now();
      await window.turnoverTraces.fitWhole();
      const t2 = performance.now();
      clearInterval(timer);
      runs.push({ rates: result.traces.filter((t) => t.rate !== null).length, analyse: t1 - t0, fit: t2 - t1, maxGap, busySeen,
        engine: window.turnoverTraces.engine(), converged: window.turnoverTraces.lastProgress()?.summary.converged });
    }
    return { reference, cells, runs };
  });
  for (const [i, run] of report.runs.entries()) {
    const total = run.analyse + run.fit;
    console.log(`384 wells × 100 points, run ${i + 1} (${run.engine}): rates ${run.analyse.toFixed(0)} ms, whole-curve fit ${run.fit.toFixed(0)} ms, ` +
      `together ${total.toFixed(0)} ms = ${(total / report.reference).toFixed(0)}× the time to parse the table (${report.reference.toFixed(1)} ms for ${report.cells} cells); ` +
      `longest stall of the page ${run.maxGap.toFixed(0)} ms = ${(run.maxGap / report.reference).toFixed(1)}× the parse`);
    assert.equal(run.engine, 'worker');
    assert.equal(run.busySeen, true, 'progress bar shown');
    assert.equal(run.rates, 384);
    assert.equal(run.converged, true);
  }
  assert.equal(await page.locator('#traces-busy').isHidden(), true);
  await page.locator('#traces-panel').screenshot({ path: join(shotDir, 'traces-384.png') });
  assert.deepEqual(watch.external, []);
  assert.deepEqual(watch.errors, []);
  await page.close();
});
