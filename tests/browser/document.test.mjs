// Browser tests of the page's one document (www/store.js): nothing lost on
// reload or restart, every overwriting action undoable, no stale or demo
// value reaching a person's results, named analyses, session files, share
// links, the migration of a page saved by Turnover 0.1, and refusal of bad
// documents with nothing lost.
//
// Same harness as the other files: Debian's Chromium through
// playwright-core, the page from file://, every non-local request refused.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { mkdtempSync, readFileSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';

import { launch, pageUrl, shotDir, isLocal } from './harness.mjs';

const here = dirname(fileURLToPath(import.meta.url));
const TIMEOUT = 60_000;

let browser;
let context;

before(async () => {
  browser = await launch('document', { acceptDownloads: true });
  context = browser.context;
});

after(async () => {
  if (browser) await browser.close();
});

async function open(ctx = context, url = pageUrl) {
  const page = await ctx.newPage();
  const problems = [];
  page.on('request', (req) => { if (!isLocal(req.url())) problems.push(`request ${req.url()}`); });
  page.on('console', (msg) => { if (msg.type() === 'error') problems.push(msg.text()); });
  page.on('pageerror', (err) => problems.push(String(err?.stack ?? err)));
  await page.goto(url, { waitUntil: 'load' });
  await started(page);
  if (url === pageUrl) await settle(page, ctx === context);
  return { page, problems };
}

/** These tests reload and open second tabs, so each tab must use the
 *  browser's one store for the page. Measured in this headless Chromium
 *  on file:// (not over http://, not on later reloads of the same tab):
 *  the first document of a tab made by the test driver sometimes reads
 *  and writes a store of its own (0 to 7 tabs in 50 across runs), and a
 *  reload then finds the browser's store without that document's
 *  writes. A reload puts the tab on the browser's store; a tab meant to
 *  start fresh is then cleared and loaded once more. Not seen in a tab
 *  reloaded 50 times, so the page's own reload path is what is tested. */
async function settle(page, fresh) {
  await page.reload();
  await started(page);
  if (!fresh) return;
  await page.evaluate(() => localStorage.clear());
  await page.reload();
  await started(page);
}

/** Waits until the page has opened its document and fitted the rate table. */
async function started(page) {
  await page.waitForFunction(() => window.turnover?.doc?.() && ['ok', 'warn', 'error', 'idle'].includes(document.querySelector('#status')?.dataset.state)
    && document.querySelector('#status').dataset.state !== 'stale', null, { timeout: 20_000 });
}

/** The rate fit's constants as shown: name → data-value (full precision). */
function constants(page) {
  return page.evaluate(() => {
    window.turnover.analyse();
    return Object.fromEntries([...document.querySelectorAll('#parameters tr[data-param]')].map((r) => [r.dataset.param, r.dataset.value]));
  });
}

/** Pastes `text` into a text field as a person would (one input event). */
async function paste(page, selector, text) {
  await page.fill(selector, text);
  await page.evaluate(() => window.turnover.analyse());
}

const undoButton = (page) => page.getByRole('button', { name: 'Undo', exact: true });
const redoButton = (page) => page.getByRole('button', { name: 'Redo', exact: true });

// An invented assay (not measured data): a lipase, triplicates at six
// concentrations.
const OWN_TABLE = `[S] (µM)\tv (nM/s)
5\t1.92
5\t2.05
10\t3.41
10\t3.60
20\t5.52
20\t5.31
50\t8.02
50\t8.29
100\t9.61
100\t9.30
200\t10.52
200\t10.81
`;

// An invented plate of four wells (not measured data), read every minute.
function ownPlate(slopes) {
  const rows = ['time (min)\tP1\tP2\tP3\tP4'];
  for (let t = 0; t <= 10; t++) rows.push([t, ...slopes.map((k, i) => (0.05 + k * t + 0.0004 * Math.sin(3 * t + i)).toFixed(4))].join('\t'));
  return `${rows.join('\n')}\n`;
}
const OWN_LAYOUT = 'trace\tS (µM)\nP1\t20\nP2\t50\nP3\t100\nP4\t400\n';

test('a typed table, [E]t and settings come back exactly after a reload and after restarting the browser', { timeout: TIMEOUT }, async () => {
  const profile = mkdtempSync(join(tmpdir(), 'turnover-restart-'));
  let first = await launch('restart', { profile, freshTabs: false });
  try {
    const { page, problems } = await open(first.context);
    await paste(page, '#data-input', OWN_TABLE);
    await page.fill('#enzyme', '4.5');
    await page.selectOption('#weighting', 'relative');
    await page.selectOption('#interval-method', 'profile');
    const shown = await constants(page);
    assert.ok(shown.kcat, 'kcat shown once [E]t is typed');
    await page.reload();
    await started(page);
    assert.equal(await page.inputValue('#data-input'), OWN_TABLE);
    assert.equal(await page.inputValue('#enzyme'), '4.5');
    assert.equal(await page.inputValue('#weighting'), 'relative');
    assert.deepEqual(await constants(page), shown, 'bit-identical constants after a reload');
    assert.match(await page.textContent('#restore-info'), /Restored .* as you left it/);
    assert.equal(await page.isVisible('#start-fresh'), true, 'a way to start fresh');
    assert.deepEqual(problems, []);
    await first.close();
    // Close the browser, start it again with the same profile, open the file.
    first = await launch('restart', { profile, freshTabs: false });
    const again = await open(first.context);
    assert.equal(await again.page.inputValue('#data-input'), OWN_TABLE);
    assert.deepEqual(await constants(again.page), shown, 'bit-identical constants after a restart');
    // Start fresh: an empty analysis; the restored one stays in the list.
    await again.page.click('#start-fresh');
    assert.equal(await again.page.inputValue('#data-input'), '');
    const listed = await again.page.$$eval('#analysis-list option', (options) => options.length);
    assert.ok(listed >= 2, `both analyses listed (${listed})`);
    assert.deepEqual(again.problems, []);
  } finally {
    await first.close();
    rmSync(profile, { recursive: true, force: true });
  }
});

test('each of the five overwriting actions is undone and redone exactly', { timeout: TIMEOUT }, async () => {
  const { page, problems } = await open();
  // 1–4: the four demo buttons, each over a person's table.
  for (const [button, section] of [['#load-demo', 'rates'], ['#load-inhibition-demo', 'rates'], ['#load-dose-demo', 'rates'], ['#traces-demo', 'traces']]) {
    await paste(page, '#data-input', OWN_TABLE);
    await paste(page, '#traces-input', ownPlate([0.01, 0.02, 0.03, 0.05]));
    const before = await page.evaluate(() => window.turnover.doc());
    await page.evaluate((id) => document.querySelector(id).click(), button);
    const demo = await page.evaluate(() => window.turnover.doc());
    assert.ok(demo.name.startsWith('Demo'), `${button} opens the demo as an analysis of its own (${demo.name})`);
    assert.notEqual(demo.id, before.id);
    await undoButton(page).click();
    assert.deepEqual(await page.evaluate(() => window.turnover.doc()), before, `Undo after ${button} restores the person's analysis`);
    assert.equal(await page.inputValue('#data-input'), OWN_TABLE);
    await redoButton(page).click();
    assert.deepEqual(await page.evaluate(() => window.turnover.doc()), demo, `Redo re-applies ${button}`);
    assert.notEqual(await page.inputValue(section === 'rates' ? '#data-input' : '#traces-input'), section === 'rates' ? OWN_TABLE : '');
    await undoButton(page).click();
  }
  // 5: sending rates from the time-course section replaces the rate table.
  await paste(page, '#layout-input', OWN_LAYOUT);
  await page.selectOption('#tr-conversion', 'none');
  await page.evaluate(() => window.turnoverTraces.analyse());
  await page.click('#traces-send');
  await page.waitForFunction(() => document.querySelector('#data-input').value.startsWith('[S]'));
  const sent = await page.inputValue('#data-input');
  assert.notEqual(sent, OWN_TABLE);
  // The keyboard: Ctrl+Z with the focus outside any text field.
  await page.locator('#plots-heading').click();
  await page.keyboard.press('Control+z');
  assert.equal(await page.inputValue('#data-input'), OWN_TABLE, 'Ctrl+Z brings back the typed table');
  await page.keyboard.press('Control+Shift+z');
  assert.equal(await page.inputValue('#data-input'), sent, 'Ctrl+Shift+Z sends the rates again');
  assert.deepEqual(problems, []);
  await page.close();
});

test('leaving a point out, dragging a window and changing a setting are each one undo step', { timeout: TIMEOUT }, async () => {
  const { page, problems } = await open();
  await paste(page, '#data-input', OWN_TABLE);
  await page.fill('#enzyme', '4.5');
  const typed = await constants(page);
  // Leave the highest rate out by clicking it.
  const result = await page.evaluate(() => window.turnover.lastResult());
  const top = result.points.reduce((a, b) => (b.v > a.v ? b : a));
  await page.locator('#plot-direct').scrollIntoViewIfNeeded();
  const position = (await page.evaluate(() => window.turnover.pointPositions('direct'))).find((p) => p.row === top.row);
  const box = await page.locator('#plot-direct').boundingBox();
  await page.mouse.click(box.x + position.x, box.y + position.y);
  assert.deepEqual((await page.evaluate(() => window.turnover.doc())).rates.excluded_lines, [top.line]);
  assert.notEqual((await constants(page)).Km, typed.Km);
  // Ctrl+Z: the point comes back and the typed [E]t stays.
  await page.keyboard.press('Control+z');
  assert.deepEqual((await page.evaluate(() => window.turnover.doc())).rates.excluded_lines, []);
  assert.equal(await page.inputValue('#enzyme'), '4.5', 'undoing the point does not touch [E]t');
  assert.deepEqual(await constants(page), typed);
  // A setting.
  await page.selectOption('#interval-method', 'profile');
  await undoButton(page).click();
  assert.equal(await page.inputValue('#interval-method'), 'asymptotic');
  // A window dragged on the demo plate.
  await page.click('#traces-demo');
  await page.evaluate(() => window.turnoverTraces.analyse());
  await page.evaluate(() => window.turnoverTraces.select('A3'));
  await page.locator('#trace-detail').scrollIntoViewIfNeeded();
  const detail = await page.locator('#trace-detail').boundingBox();
  const x2 = await page.evaluate(() => window.turnoverTraces.detailX(2));
  const x6 = await page.evaluate(() => window.turnoverTraces.detailX(6));
  await page.mouse.move(detail.x + x2, detail.y + detail.height / 2);
  await page.mouse.down();
  await page.mouse.move(detail.x + x6, detail.y + detail.height / 2);
  await page.mouse.up();
  const windows = (await page.evaluate(() => window.turnover.doc())).traces.windows;
  assert.deepEqual(Object.keys(windows), ['A3']);
  await undoButton(page).click();
  assert.deepEqual((await page.evaluate(() => window.turnover.doc())).traces.windows, {});
  const a3 = (await page.evaluate(() => window.turnoverTraces.analyse())).traces.find((t) => t.name === 'A3');
  assert.equal(a3.manual_window, false, 'the analysis follows the undone window');
  assert.deepEqual(problems, []);
  await page.close();
});

test('rates sent on are always those of the tables as they are now', { timeout: TIMEOUT }, async () => {
  const { page, problems } = await open();
  // Scenario 1: analyse a plate, change one trace's [S] from 50 to 500 in
  // the layout, send at once.
  await paste(page, '#traces-input', ownPlate([0.01, 0.02, 0.03, 0.05]));
  await paste(page, '#layout-input', OWN_LAYOUT);
  await page.selectOption('#tr-conversion', 'none');
  await page.evaluate(() => window.turnoverTraces.analyse());
  await page.fill('#layout-input', OWN_LAYOUT.replace('P2\t50', 'P2\t500'));
  await page.click('#traces-send');
  await page.waitForFunction(() => document.querySelector('#data-input').value.startsWith('[S]'));
  const sent = await page.inputValue('#data-input');
  assert.match(sent, /^500\t/m, `the rate table has [S] = 500: ${sent}`);
  assert.doesNotMatch(sent, /^50\t/m, 'and not the old 50');
  const points = (await page.evaluate(() => window.turnover.lastResult())).points.map((p) => p.s).sort((a, b) => a - b);
  assert.deepEqual(points, [20, 100, 400, 500], 'Km is fitted from the [S] the layout says now');
  // Scenario 2: paste a new, larger plate and send at once; then fit whole
  // curves: the new plate's rates and points, not the old ones.
  const wells = Array.from({ length: 6 }, (_, i) => `Q${i + 1}`);
  const rows = [`time (min)\t${wells.join('\t')}`];
  for (let t = 0; t <= 30; t++) rows.push([t, ...wells.map((_, i) => (0.02 + 0.002 * (i + 1) * t).toFixed(4))].join('\t'));
  const layout = ['trace\tS (µM)', ...wells.map((w, i) => `${w}\t${10 * 2 ** i}`)].join('\n');
  await page.fill('#traces-input', `${rows.join('\n')}\n`);
  await page.fill('#layout-input', `${layout}\n`);
  await page.selectOption('#tr-conversion', 'none');
  await page.click('#traces-send');
  await page.waitForFunction(() => window.turnover.lastResult()?.points.length === 6, null, { timeout: 10_000 });
  const traces = await page.evaluate(() => window.turnoverTraces.analyse());
  assert.deepEqual(traces.traces.map((t) => t.name), wells);
  // The whole-curve fit needs concentrations: give a conversion, then fit.
  await page.selectOption('#tr-conversion', 'epsilon');
  await page.fill('#tr-epsilon', '6220');
  await page.fill('#tr-path', '0.6');
  await page.evaluate(() => window.turnoverTraces.fitWhole());
  const fit = await page.evaluate(() => window.turnoverTraces.lastProgress());
  assert.equal(fit.curves.length, 6);
  assert.equal(fit.summary.n, 6 * 31, 'the whole-curve fit uses the 186 points of the pasted plate');
  assert.deepEqual(problems, []);
  await page.close();
});

test('the demo’s [E]t never reaches a person’s results', { timeout: TIMEOUT }, async () => {
  const { page, problems } = await open();
  assert.equal(await page.inputValue('#enzyme'), '25', 'the demo carries its own [E]t');
  assert.ok((await constants(page)).kcat, 'the demo shows kcat');
  // The person's own plate, then its rates sent to the fit.
  await paste(page, '#traces-input', ownPlate([0.01, 0.02, 0.03, 0.05]));
  await paste(page, '#layout-input', OWN_LAYOUT);
  assert.equal(await page.inputValue('#tr-epsilon'), '', 'the demo plate’s ε left with it');
  await page.fill('#tr-epsilon', '6220');
  await page.fill('#tr-path', '1');
  await page.click('#traces-send');
  await page.waitForFunction(() => document.querySelector('#data-input').value.startsWith('[S]'));
  assert.equal(await page.inputValue('#enzyme'), '');
  const shown = await constants(page);
  assert.deepEqual(Object.keys(shown), ['Vmax', 'Km'], 'no kcat without an [E]t the person gave');
  assert.doesNotMatch(await page.evaluate(() => window.turnover.resultsText()), /kcat/);
  // Typing [E]t brings kcat.
  await page.fill('#enzyme', '2');
  assert.ok((await constants(page)).kcat);
  // The same when a person's rate table replaces the demo's directly.
  await page.click('#load-demo');
  await paste(page, '#data-input', OWN_TABLE);
  assert.equal(await page.inputValue('#enzyme'), '');
  assert.deepEqual(Object.keys(await constants(page)), ['Vmax', 'Km']);
  assert.equal(await page.isVisible('#demo-banner'), false, 'no demo banner on a person’s analysis');
  assert.deepEqual(problems, []);
  await page.close();
});

test('named analyses: rename, new, duplicate, open, delete and undo the deletion', { timeout: TIMEOUT }, async () => {
  const { page, problems } = await open();
  await paste(page, '#data-input', OWN_TABLE);
  await page.fill('#analysis-name', 'Lipase batch 3');
  await page.press('#analysis-name', 'Enter');
  await page.locator('#plots-heading').click();
  const mine = await page.evaluate(() => window.turnover.doc());
  assert.equal(mine.name, 'Lipase batch 3');
  await page.click('#analysis-duplicate');
  const copy = await page.evaluate(() => window.turnover.doc());
  assert.equal(copy.name, 'Lipase batch 3 (copy)');
  assert.equal(copy.rates.text, OWN_TABLE);
  await page.click('#analysis-new');
  assert.equal(await page.inputValue('#data-input'), '');
  const options = await page.$$eval('#analysis-list option', (list) => list.map((o) => o.textContent));
  assert.ok(options.some((o) => /^Lipase batch 3 · \d{4}-\d\d-\d\d \d\d:\d\d$/.test(o)), `listed with its date: ${options}`);
  // Open the first one again from the list.
  await page.selectOption('#analysis-list', mine.id);
  assert.equal(await page.inputValue('#data-input'), OWN_TABLE);
  assert.equal(await page.inputValue('#analysis-name'), 'Lipase batch 3');
  // Delete it; Undo brings it back, in the list too.
  await page.click('#analysis-delete');
  assert.notEqual((await page.evaluate(() => window.turnover.doc())).id, mine.id);
  assert.ok(!(await page.$$eval('#analysis-list option', (list) => list.map((o) => o.value))).includes(mine.id));
  await undoButton(page).click();
  assert.equal((await page.evaluate(() => window.turnover.doc())).id, mine.id);
  assert.ok((await page.$$eval('#analysis-list option', (list) => list.map((o) => o.value))).includes(mine.id));
  assert.deepEqual(problems, []);
  await page.close();
});

test('session file and share link round trips give the same analysis and numbers', { timeout: TIMEOUT }, async () => {
  const { page, problems } = await open();
  await paste(page, '#data-input', OWN_TABLE);
  await page.fill('#enzyme', '4.5');
  await page.selectOption('#interval-method', 'profile');
  const shown = await constants(page);
  const doc = await page.evaluate(() => window.turnover.doc());
  const [download] = await Promise.all([page.waitForEvent('download'), page.click('#export-session')]);
  const path = join(shotDir, 'session.json');
  await download.saveAs(path);
  const saved = JSON.parse(readFileSync(path, 'utf8'));
  assert.deepEqual(saved, doc, 'the session file is the document');
  // Open it in a new tab (a fresh browser state) as a new analysis.
  const other = await open();
  await other.page.setInputFiles('#session-input', path);
  await other.page.waitForFunction((text) => document.querySelector('#data-input').value === text, OWN_TABLE);
  assert.deepEqual(await constants(other.page), shown);
  const opened = await other.page.evaluate(() => window.turnover.doc());
  assert.deepEqual({ ...opened, id: doc.id }, doc, 'the same document, under a new id');
  await other.page.close();
  // The share link.
  await page.click('#share-link');
  await page.waitForFunction(() => document.querySelector('#share-output').value.includes('#doc='));
  const link = await page.inputValue('#share-output');
  assert.match(await page.textContent('#share-note'), /never send/);
  const viaLink = await open(context, link);
  assert.equal(await viaLink.page.inputValue('#data-input'), OWN_TABLE);
  assert.deepEqual(await constants(viaLink.page), shown);
  assert.match(await viaLink.page.textContent('#restore-info'), /shared link/);
  assert.equal(await viaLink.page.evaluate(() => location.hash), '', 'the fragment is cleared once opened');
  await viaLink.page.close();
  // Too large for a link: say how large and what the limit is.
  // Noisy readings compress poorly: 60 wells × 200 readings.
  let seed = 11;
  const noise = () => ((seed = (seed * 1664525 + 1013904223) >>> 0) / 4294967296);
  const big = [`time (s)\t${Array.from({ length: 60 }, (_, i) => `W${i + 1}`).join('\t')}`];
  for (let j = 0; j < 200; j++) big.push([j * 5, ...Array.from({ length: 60 }, () => (0.1 + noise()).toFixed(4))].join('\t'));
  await paste(page, '#traces-input', `${big.join('\n')}\n`);
  await page.click('#share-link');
  await page.waitForFunction(() => /characters, over the/.test(document.querySelector('#share-note').textContent));
  assert.match(await page.textContent('#share-note'), /needs a link of [\d,]+ characters, over the 32,000 .*Export session file/);
  assert.equal(await page.isVisible('#share-output'), false);
  assert.deepEqual(problems, []);
  await page.close();
});

test('a page saved by Turnover 0.1 opens with the same numbers', { timeout: TIMEOUT }, async () => {
  const fixture = join(here, 'fixtures', 'saved-page-v1.html');
  const saved = JSON.parse(/<script type="application\/json" id="turnover-saved-state">([\s\S]*?)<\/script>/.exec(readFileSync(fixture, 'utf8'))[1]);
  const { page, problems } = await open();
  await page.setInputFiles('#session-input', fixture);
  await page.waitForFunction((text) => document.querySelector('#data-input').value === text, saved.request.text);
  const shown = await constants(page);
  // The numbers that version computed and saved beside its data. Since the
  // fixed-size solver path (fastpath.rs) the last bit may differ (measured:
  // Km 0.39086973367500677 against 0.3908697336750067, 1.4e-16 relative):
  // the minimum is flat within rounding over about √ε·SE, so a different
  // correct solver stops elsewhere in it. 1e-9 relative is far below any
  // digit shown or reported.
  for (const p of saved.results.fit.parameters) {
    const got = Number(shown[p.name]);
    assert.ok(Math.abs(got - p.value) <= 1e-9 * Math.abs(p.value), `${p.name}: ${got}, saved by 0.1: ${p.value}`);
  }
  assert.match(await page.textContent('#restore-info'), /earlier version/);
  assert.equal(await page.inputValue('#tr-epsilon'), '6300');
  const a3 = (await page.evaluate(() => window.turnoverTraces.analyse())).traces.find((t) => t.name === 'A3');
  assert.equal(a3.manual_window, true);
  assert.deepEqual(problems, []);
  await page.close();
});

test('a bad document is refused with its reason, nothing is lost, and the refused text can be downloaded', { timeout: TIMEOUT }, async () => {
  const { page, problems } = await open();
  await paste(page, '#data-input', OWN_TABLE);
  const before = await page.evaluate(() => window.turnover.doc());
  const broken = join(shotDir, 'broken-session.json');
  writeFileSync(broken, JSON.stringify({ ...before, rates: { ...before.rates, excluded_lines: ['two'] } }));
  await page.setInputFiles('#session-input', broken);
  await page.waitForSelector('#document-problem:not([hidden])');
  assert.match(await page.textContent('#document-problem-text'), /"rates.excluded_lines" must list line numbers.*unchanged/);
  assert.deepEqual(await page.evaluate(() => window.turnover.doc()), before, 'the current analysis is untouched');
  const [download] = await Promise.all([page.waitForEvent('download'), page.click('#download-refused')]);
  const refusedPath = join(shotDir, 'refused.txt');
  await download.saveAs(refusedPath);
  assert.equal(readFileSync(refusedPath, 'utf8'), readFileSync(broken, 'utf8'));
  // A stored analysis damaged behind the page's back: refused on reload,
  // with the reason, and the text kept for download.
  await page.evaluate((id) => localStorage.setItem(`turnover.analysis.${id}`, '{"format": "turnover-document", "schema": 2, "id": 5}'), before.id);
  await page.reload();
  await started(page);
  assert.match(await page.textContent('#document-problem-text'), /kept in this browser was not opened: "id" must be a text/);
  // A damaged link.
  const bad = await open(context, `${pageUrl}#doc=AAAA`);
  assert.match(await bad.page.textContent('#document-problem-text'), /link/);
  await bad.page.close();
  assert.deepEqual(problems, []);
  await page.close();
});

test('when the browser keeps nothing, the page says so once and keeps working', { timeout: TIMEOUT }, async () => {
  const page = await context.newPage();
  const errors = [];
  page.on('pageerror', (err) => errors.push(String(err)));
  // Storage that refuses every write, as a full or private-window store does.
  await page.addInitScript(() => {
    Storage.prototype.setItem = function refuse() {
      throw new DOMException('The quota has been exceeded.', 'QuotaExceededError');
    };
  });
  await page.goto(pageUrl);
  await started(page);
  await paste(page, '#data-input', OWN_TABLE);
  await page.fill('#enzyme', '3');
  assert.ok((await constants(page)).kcat, 'the fit still works');
  const message = await page.textContent('#storage-info');
  assert.match(message, /not keeping your work: its storage is full/);
  assert.equal(await page.$$eval('#storage-info', (n) => n.length), 1);
  assert.deepEqual(errors, []);
  await page.screenshot({ path: join(shotDir, 'storage-full.png') });
  await page.close();
});

test('the same analysis open in two tabs: a change in one is announced in the other, which can take it', { timeout: TIMEOUT }, async () => {
  const profile = mkdtempSync(join(tmpdir(), 'turnover-tabs-'));
  const shared = await launch('tabs', { profile, freshTabs: false });
  try {
    const first = await open(shared.context);
    await paste(first.page, '#data-input', OWN_TABLE);
    const second = await open(shared.context);
    assert.equal(await second.page.inputValue('#data-input'), OWN_TABLE, 'the second tab opens the same analysis');
    await first.page.fill('#enzyme', '7');
    await second.page.waitForSelector('#other-tab:not([hidden])');
    assert.match(await second.page.textContent('#other-tab-text'), /changed in another tab/);
    await second.page.click('#other-tab-open');
    assert.equal(await second.page.inputValue('#enzyme'), '7', 'the other tab’s version is taken');
    assert.deepEqual([...first.problems, ...second.problems], []);
  } finally {
    await shared.close();
    rmSync(profile, { recursive: true, force: true });
  }
});
