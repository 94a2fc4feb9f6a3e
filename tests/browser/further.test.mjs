// Browser tests for the further-questions section of dist/turnover.html:
// each question's demo gives a result from the core, the table and options
// are part of the document (undo, reload), bad cells are said with their
// line and column, and every plot is drawn, in headless Debian Chromium
// from file:// with every non-local request refused.
//
// Run:  cd tests/browser && TURNOVER_HTML=../../dist/turnover.html node --test further.test.mjs

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join, resolve, dirname } from 'node:path';
import { existsSync, writeFileSync } from 'node:fs';
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';

import { launch, pageUrl, shotDir, openWatched } from './harness.mjs';

const here = dirname(fileURLToPath(import.meta.url));
let browser;

before(async () => {
  browser = await launch('further', { acceptDownloads: true });
});

after(async () => {
  if (browser) await browser.close();
});

const openPage = () => openWatched(browser.context);

async function choose(page, kind) {
  await page.selectOption('#further-kind', kind);
  await page.click('#further-demo');
  await page.waitForFunction(() => window.turnover.further.lastResult() !== null, null, { timeout: 60_000 });
}

const result = (page) => page.evaluate(() => window.turnover.further.lastResult());

test('compare data sets: the demo says Vmax differs and Km does not, as the core does', async () => {
  const { page, errors } = await openPage();
  await choose(page, 'sets');
  const r = await result(page);
  const byName = Object.fromEntries(r.constants.map((c) => [c.name, c]));
  // The demo was made with equal Km and a 3.3-fold lower Vmax (invented data).
  assert.equal(byName.Vmax.differs, true);
  assert.equal(byName.Km.differs, false);
  const ratio = byName.Vmax.ratio[0];
  assert.ok(ratio.ci_low < 0.3 && 0.3 < ratio.ci_high, `Vmax ratio interval ${ratio.ci_low}–${ratio.ci_high} should hold the made-up 0.3`);
  const shown = await page.evaluate(() => ({
    verdict: [...document.querySelectorAll('#further-verdict .verdict')].map((p) => p.textContent).join(' '),
    tables: document.querySelectorAll('#further-fits table').length,
    plots: [...document.querySelectorAll('#further-plots canvas')].map((c) => c.dataset.drawn),
    caution: document.querySelector('#further-caution').textContent,
    status: document.querySelector('#further-status').dataset.state,
  }));
  assert.equal(shown.verdict, r.verdict);
  assert.equal(shown.tables, r.sets.length);
  assert.ok(shown.plots.length >= 1 && shown.plots.every((d) => d === 'yes'), `plots drawn: ${shown.plots}`);
  assert.match(shown.caution, /estimate/);
  // The page shows the core's own numbers, to full precision in the rows.
  const km = await page.evaluate(() => Number(document.querySelector('#further-fits tr[data-param="Km"]').dataset.value));
  assert.equal(km, r.sets[0].fit.parameters.find((p) => p.name === 'Km').value);
  await page.locator('#further-panel').screenshot({ path: join(shotDir, 'further-sets.png') });
  assert.deepEqual(errors, []);
  await page.close();
});

test('compare data sets: the table and options are the document (undo, reload), bad cells named by line and column', async () => {
  const { page, errors } = await openPage();
  await choose(page, 'sets');
  const text = await page.inputValue('#further-input');
  // A typo in one rate: said with its line and column, the rest still fitted.
  const broken = text.replace('W84A\t8\t0.350', 'W84A\t8\t0,35o');
  await page.fill('#further-input', broken);
  await page.evaluate(() => window.turnover.analyse());
  const r = await result(page);
  const problem = r.problems.find((p) => p.line === 21);
  assert.ok(problem, `a problem on line 21: ${JSON.stringify(r.problems)}`);
  assert.equal(problem.column, 3);
  const listed = await page.locator('#further-warnings').textContent();
  assert.match(listed, /line 21, column 3/);
  // The option is part of the document: choosing the reference set is undoable.
  await page.fill('#further-sets-reference', 'W84A');
  await page.evaluate(() => window.turnover.analyse());
  assert.equal((await result(page)).reference, 'W84A');
  await page.evaluate(() => window.turnover.undo());
  await page.evaluate(() => window.turnover.analyse());
  assert.equal(await page.inputValue('#further-sets-reference'), '');
  assert.equal((await result(page)).reference, 'wild type');
  await page.evaluate(() => window.turnover.redo());
  await page.evaluate(() => window.turnover.analyse());
  assert.equal((await result(page)).reference, 'W84A');
  // Kept in this browser: a reload brings back the table and the option.
  await page.reload({ waitUntil: 'load' });
  // (The rate section is empty in this analysis, so its status stays idle.)
  await page.waitForFunction(() => window.turnover.doc?.() && window.turnover.further.lastResult() !== null, null, { timeout: 30_000 }).catch(async (error) => {
    const seen = await page.evaluate(() => ({ doc: window.turnover.doc?.()?.sets, kind: window.turnover.doc?.()?.further, status: document.querySelector('#further-status').textContent, info: document.querySelector('#restore-info')?.textContent, problem: document.querySelector('#document-problem-text')?.textContent }));
    throw new Error(`${error.message}: ${JSON.stringify(seen)}`);
  });
  assert.equal(await page.inputValue('#further-sets-reference'), 'W84A');
  assert.equal(await page.inputValue('#further-input'), broken);
  assert.equal((await result(page)).reference, 'W84A');
  assert.deepEqual(errors, []);
  await page.close();
});

test('compare data sets with the Hill and tight-binding models: the options each needs appear with it, [E]t is asked for, the page gives the command line’s numbers', async () => {
  const { page, errors } = await openPage();
  await page.selectOption('#further-kind', 'sets');
  // Invented sets with known truth and a fixed pattern of ±3 % errors (no
  // generator needed): Hill with K0.5 20 and 40 µM, nH 1.8; tight binding
  // with [E]t = 10 nM and Ki_app 2 and 6 nM.
  const wobble = [1.02, 0.97, 1.01, 0.99, 1.03, 0.98, 1.0, 1.02, 0.97, 1.01];
  const hill = ['set\t[S] (µM)\tv (µM/min)'];
  for (const [name, k] of [['A', 20], ['B', 40]]) {
    [2, 5, 10, 20, 40, 80, 160, 320].forEach((x, j) => hill.push(`${name}\t${x}\t${(10 * x ** 1.8 / (k ** 1.8 + x ** 1.8) * wobble[j]).toFixed(4)}`));
  }
  const tight = ['set\t[I] (nM)\tv (µM/min)'];
  for (const [name, ki] of [['A', 2], ['B', 6]]) {
    [0, 1, 2, 5, 10, 15, 20, 30, 50, 100].forEach((i, j) => {
      const b = 10 + i + ki;
      const bound = (b - Math.sqrt(b * b - 40 * i)) / 20;
      tight.push(`${name}\t${i}\t${(5 * (1 - bound) * wobble[j]).toFixed(4)}`);
    });
  }
  assert.equal(await page.isHidden('#further-sets-enzyme'), true, '[E]t is not asked for Michaelis-Menten');
  await page.selectOption('#further-sets-model', 'hill');
  await page.fill('#further-input', `${hill.join('\n')}\n`);
  await page.evaluate(() => window.turnover.analyse());
  const h = await result(page);
  const k05 = h.constants.find((c) => c.name === 'K0.5');
  assert.equal(k05.differs, true, 'K0.5 doubles between the sets');
  assert.equal(h.constants.find((c) => c.name === 'nH').differs, false, 'nH is the same in both sets');
  await page.selectOption('#further-sets-model', 'morrison');
  assert.equal(await page.isHidden('#further-sets-enzyme'), false, '[E]t is asked for the tight-binding model');
  assert.equal(await page.isHidden('#further-sets-ceiling'), true);
  await page.fill('#further-input', `${tight.join('\n')}\n`);
  await page.evaluate(() => window.turnover.analyse());
  assert.match(await page.textContent('#further-status'), /needs \[E\]t/);
  await page.fill('#further-sets-enzyme', '10');
  await page.evaluate(() => window.turnover.analyse());
  const m = await result(page);
  const ki = m.constants.find((c) => c.name === 'Ki_app');
  assert.equal(ki.differs, true);
  assert.ok(ki.ratio[0].ci_low < 3 && 3 < ki.ratio[0].ci_high, `Ki_app ratio ${ki.ratio[0].ci_low}–${ki.ratio[0].ci_high} should hold the made-up 3`);
  const bin = resolve(process.env.TURNOVER_BIN ?? join(here, '..', '..', 'target', 'release', 'turnover'));
  if (existsSync(bin)) {
    const file = join(shotDir, 'sets-tight.tsv');
    writeFileSync(file, `${tight.join('\n')}\n`);
    const cli = JSON.parse(execFileSync(bin, ['compare-sets', file, '--by', 'set', '--model', 'morrison', '--enzyme', '10', '--json']).toString());
    // The page's WebAssembly and the host's libm may differ in the last bits.
    cli.sets.forEach((set, k) => set.fit.parameters.forEach((p, j) => {
      const shown = m.sets[k].fit.parameters[j].value;
      assert.ok(Math.abs(shown - p.value) <= 1e-8 * Math.abs(p.value), `${set.name} ${p.name}: ${shown} against ${p.value}`);
    }));
  }
  assert.deepEqual(errors, []);
  await page.close();
});

test('further questions: a plot downloads as an SVG figure drawn by the core', async () => {
  const { page, errors } = await openPage();
  await choose(page, 'sets');
  const [download] = await Promise.all([
    page.waitForEvent('download'),
    page.click('#further-plots figure button'),
  ]);
  const path = await download.path();
  const { readFileSync } = await import('node:fs');
  const svg = readFileSync(path, 'utf8');
  assert.match(svg, /^<svg[^>]*width="85mm"/);
  assert.match(svg, /µM/);
  assert.deepEqual(errors, []);
  await page.close();
});

test('time-dependent inhibition: the demo gives back kinact and KI it was made with, from the core, undoable', async () => {
  const { page, errors } = await openPage();
  await page.click('#load-inactivation-demo');
  await page.waitForFunction(() => window.turnover.inactivation.lastResult() !== null, null, { timeout: 60_000 });
  const r = await page.evaluate(() => window.turnover.inactivation.lastResult());
  const value = (name) => r.parameters.find((p) => p.name === name);
  // The demo was made with kinact = 0.25 per min and KI = 3 µM (invented
  // data with 0.0008 noise): each 95% interval should hold its true value.
  for (const [name, truth] of [['kinact', 0.25], ['KI', 3]]) {
    const p = value(name);
    assert.ok(p.ci_low < truth && truth < p.ci_high, `${name} ${p.ci_low}–${p.ci_high} should hold ${truth}`);
  }
  assert.equal(r.saturation, true);
  const shown = await page.evaluate(() => ({
    rows: document.querySelectorAll('#inactivation-traces tbody tr').length,
    kinact: Number(document.querySelector('#inactivation-parameters tr[data-param="kinact"]').dataset.value),
    plots: [...document.querySelectorAll('#inactivation-plots canvas')].map((c) => c.dataset.drawn),
  }));
  assert.equal(shown.rows, r.traces.length);
  assert.equal(shown.kinact, value('kinact').value);
  assert.deepEqual(shown.plots, ['yes', 'yes']);
  // Every trace at once with kinact and KI shared: its intervals hold the
  // truth too, it agrees with the two-step route within the two routes'
  // uncertainty (ratios near 1 at this noise), and it is shown and drawn.
  const g = r.global;
  assert.ok(g && g.converged && g.saturation, 'the global fit converged and saw saturation');
  for (const [name, truth] of [['kinact', 0.25], ['KI', 3]]) {
    const p = g.parameters.find((q) => q.name === name);
    assert.ok(p.ci_low < truth && truth < p.ci_high, `global ${name} ${p.ci_low}–${p.ci_high} should hold ${truth}`);
    const c = g.comparison.find((q) => q.name === name);
    assert.ok(Math.abs(c.ratio - 1) < 0.1, `global/two-step ${name} = ${c.ratio}`);
  }
  const globalShown = await page.evaluate(() => ({
    hidden: document.querySelector('#inactivation-global').hidden,
    kinact: Number(document.querySelector('#inactivation-global-parameters tr[data-param="kinact"]').dataset.value),
    comparison: document.querySelectorAll('#inactivation-global-comparison tbody tr').length,
    plots: [...document.querySelectorAll('#inactivation-global-plots canvas')].map((c) => c.dataset.drawn),
  }));
  assert.equal(globalShown.hidden, false);
  assert.equal(globalShown.kinact, g.parameters.find((q) => q.name === 'kinact').value);
  assert.equal(globalShown.comparison, g.comparison.length);
  assert.deepEqual(globalShown.plots, ['yes']);
  // Only [S] given: said, and nothing computed from half an input.
  await page.fill('#tr-inact-substrate', '50');
  await page.evaluate(() => window.turnover.analyse());
  assert.equal(await page.evaluate(() => window.turnover.inactivation.lastResult()), null);
  assert.match(await page.locator('#inactivation-status').textContent(), /both \[S\] and Km/);
  await page.fill('#tr-inact-km', '50');
  await page.evaluate(() => window.turnover.analyse());
  const corrected = await page.evaluate(() => window.turnover.inactivation.lastResult());
  // [S] = Km halves the apparent KI (KI = KI_app / (1 + [S]/Km)).
  const ki = corrected.parameters.find((p) => p.name === 'KI').value;
  assert.ok(Math.abs(ki / value('KI').value - 0.5) < 1e-9, `${ki}`);
  await page.evaluate(() => { window.turnover.undo(); window.turnover.undo(); });
  await page.evaluate(() => window.turnover.analyse());
  assert.equal(await page.inputValue('#tr-inact-substrate'), '');
  await page.locator('#inactivation-block').screenshot({ path: join(shotDir, 'inactivation.png') });
  assert.deepEqual(errors, []);
  await page.close();
});

test('enzyme stability: the demo plate’s traces at four [E] are checked for superimposing against [E]·t', async () => {
  const { page, errors } = await openPage();
  await page.waitForFunction(() => window.turnoverTraces.current() && window.turnoverTraces.lastResult() !== null, null, { timeout: 60_000 });
  const checks = await page.evaluate(() => window.turnoverTraces.lastResult().selwyn);
  assert.ok(checks.length >= 1, 'the start demo has traces at several [E] for one [S]');
  const shown = await page.evaluate(() => ({
    hidden: document.querySelector('#stability-panel').hidden,
    findings: [...document.querySelectorAll('#stability-findings li')].map((li) => li.textContent),
    plots: [...document.querySelectorAll('#stability-plots canvas')].map((c) => c.dataset.drawn),
  }));
  assert.equal(shown.hidden, false);
  assert.deepEqual(shown.findings, checks.map((c) => c.message));
  assert.ok(shown.plots.length === checks.length && shown.plots.every((d) => d === 'yes'));
  assert.deepEqual(errors, []);
  await page.close();
});

test('pH-rate profile and temperature: the demos give back the constants they were made with, and every plot is drawn', async () => {
  const { page, errors } = await openPage();
  await choose(page, 'ph');
  const ph = await result(page);
  const bell = ph.fits.find((f) => f.model === 'bell');
  // Made with pKa1 = 6.2, pKa2 = 8.9 and 4 % scatter (invented data).
  for (const [name, truth] of [['pKa1', 6.2], ['pKa2', 8.9]]) {
    const p = bell.parameters.find((q) => q.name === name);
    assert.ok(p.ci_low < truth && truth < p.ci_high, `${name} ${p.ci_low}–${p.ci_high} should hold ${truth}`);
  }
  assert.equal(ph.comparison.preferred, 'bell');
  let plots = await page.$$eval('#further-plots canvas', (cs) => cs.map((c) => c.dataset.drawn));
  assert.ok(plots.length === ph.plots.length && plots.every((d) => d === 'yes'), `pH plots ${plots}`);
  await page.selectOption('#further-kind', 'temperature');
  await page.click('#further-demo');
  await page.waitForFunction(() => window.turnover.doc().further.kind === 'temperature' && window.turnover.further.lastResult()?.arrhenius, null, { timeout: 30_000 });
  const t = await result(page);
  // Made with ΔH‡ = 55 kJ/mol and ΔS‡ = −60 J/(mol·K) and 3 % scatter.
  for (const [name, truth] of [['ΔH‡', 55], ['ΔS‡', -60]]) {
    const p = t.eyring.parameters.find((q) => q.name === name);
    assert.ok(p.ci_low < truth && truth < p.ci_high, `${name} ${p.ci_low}–${p.ci_high} should hold ${truth}`);
  }
  plots = await page.$$eval('#further-plots canvas', (cs) => cs.map((c) => c.dataset.kind));
  assert.deepEqual(plots, t.plots.map((p) => p.kind));
  // A temperature without a unit is refused with the reason, never guessed.
  await page.fill('#further-input', 'T\tkcat (s-1)\n10\t0.3\n20\t0.7\n30\t1.5\n40\t3.3\n');
  await page.evaluate(() => window.turnover.analyse());
  assert.equal(await result(page), null);
  assert.match(await page.locator('#further-status').textContent(), /unit/);
  await page.locator('#further-panel').screenshot({ path: join(shotDir, 'further-temperature-refused.png') });
  assert.deepEqual(errors, []);
  await page.close();
});

test('two substrates: the ping-pong demo is named ping-pong, its parallel double-reciprocal lines drawn, kcat from [E]t', async () => {
  const { page, errors } = await openPage();
  await choose(page, 'bisubstrate');
  const r = await result(page);
  // Made from the ping-pong law with KmA = 10 µM, KmB = 0.5 mM (invented data, 3 % scatter).
  assert.equal(r.comparison.preferred, 'ping-pong', r.comparison.verdict);
  const pp = r.fits.find((f) => f.model === 'ping-pong');
  for (const [name, truth] of [['KmA', 10], ['KmB', 0.5]]) {
    const p = pp.parameters.find((q) => q.name === name);
    assert.ok(p.ci_low < truth && truth < p.ci_high, `${name} ${p.ci_low}–${p.ci_high} should hold ${truth}`);
  }
  const kinds = await page.$$eval('#further-plots canvas', (cs) => cs.map((c) => `${c.dataset.kind}:${c.dataset.drawn}`));
  assert.deepEqual(kinds, r.plots.map((p) => `${p.kind}:yes`));
  await page.fill('#further-bisubstrate-enzyme', '20');
  await page.evaluate(() => window.turnover.analyse());
  const withKcat = await result(page);
  const kcat = withKcat.fits.find((f) => f.model === 'ping-pong').parameters.find((p) => p.name === 'kcat');
  const vmax = withKcat.fits.find((f) => f.model === 'ping-pong').parameters.find((p) => p.name === 'Vmax');
  // kcat = Vmax/[E]t: µM/min over 20 nM, per second: Vmax/0.020/60.
  assert.ok(Math.abs(kcat.value - vmax.value / 0.020 / 60) < 1e-9 * kcat.value, `kcat ${kcat.value}`);
  await page.fill('#further-bisubstrate-enzyme', 'twenty');
  await page.evaluate(() => window.turnover.analyse());
  assert.equal(await result(page), null);
  assert.match(await page.locator('#further-status').textContent(), /\[E\]t/);
  assert.deepEqual(errors, []);
  await page.close();
});
