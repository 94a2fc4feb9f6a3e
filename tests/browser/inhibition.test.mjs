// Browser tests for the inhibitor-series section of dist/turnover.html:
// the family of curves, the verdict and every plot drawn, in headless
// Debian Chromium through playwright-core, from file://, with every
// non-local request counted and refused.
//
// Run:  cd tests/browser && TURNOVER_HTML=../../dist/turnover.html node --test

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';

import { launch, pageUrl, shotDir, isLocal, openWatched } from './harness.mjs';

const PLOTS = [
  'inhibition-direct', 'inhibition-lineweaver-burk', 'inhibition-eadie-hofstee', 'inhibition-hanes-woolf',
  'dixon', 'cornish-bowden', 'slope-replot', 'intercept-replot',
];

let context;
let browser;
let external = [];

before(async () => {
  browser = await launch('inhibition');
  context = browser.context;
  external = browser.external;
});

after(async () => {
  if (browser) await browser.close();
});

const openPage = () => openWatched(context);

/** Coloured (non-white, non-grey) pixels of a canvas, per distinct hue bucket. */
async function canvasColours(page, id) {
  return page.evaluate((canvasId) => {
    const canvas = document.getElementById(canvasId);
    const data = canvas.getContext('2d').getImageData(0, 0, canvas.width, canvas.height).data;
    let inked = 0;
    const hues = new Set();
    for (let k = 0; k < data.length; k += 4) {
      const [r, g, b] = [data[k], data[k + 1], data[k + 2]];
      if (r > 245 && g > 245 && b > 245) continue;
      inked += 1;
      const spread = Math.max(r, g, b) - Math.min(r, g, b);
      if (spread > 60) hues.add(`${r >> 5},${g >> 5},${b >> 5}`);
    }
    return { inked, hues: hues.size };
  }, id);
}

async function loadDemo(page) {
  await page.click('#load-inhibition-demo');
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#inhibition-status')?.dataset.state),
    null, { timeout: 20_000 });
}

test('inhibitor demo: verdict, ranking, constants and every plot drawn', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  assert.equal(await page.isHidden('#inhibition-results'), true, 'the section stays quiet without an [I] column');
  await loadDemo(page);
  assert.equal(await page.isVisible('#inhibition-results'), true);

  // The demo was generated around mixed inhibition with Kiu ≈ 3.5×Kic.
  const verdict = await page.textContent('#inhibition-verdict');
  assert.match(verdict, /^Verdict: mixed, with Kiu ≈ [\d.]+×Kic/, verdict);
  assert.equal(await page.getAttribute('#inhibition-verdict', 'data-preferred'), 'mixed');

  const ranking = await page.$$eval('#mechanism-ranking tbody tr', (rows) => rows.map((r) => ({ model: r.dataset.model, weight: Number(r.dataset.weight) })));
  assert.deepEqual(ranking.map((r) => r.model).sort(), ['competitive', 'mixed', 'noncompetitive', 'uncompetitive']);
  const total = ranking.reduce((s, r) => s + r.weight, 0);
  assert.ok(Math.abs(total - 1) < 1e-9, `Akaike weights sum to ${total}`);

  // The constants shown are the core's numbers for the preferred model.
  const shown = await page.$$eval('#inhibition-parameters tbody tr', (rows) => rows.map((r) => [r.dataset.param, Number(r.dataset.value), Number(r.dataset.se)]));
  assert.deepEqual(shown.map((r) => r[0]), ['Vmax', 'Km', 'Kic', 'Kiu', 'Kiu/Kic']);
  const core = await page.evaluate(() => window.turnover.inhibition.lastResult().fits.find((f) => f.model === 'mixed').parameters);
  for (const [k, [, value, se]] of shown.entries()) {
    assert.equal(value, core[k].value);
    assert.equal(se, core[k].std_error);
    assert.ok(se > 0 && se < value, `${core[k].name}: se ${se}`);
  }
  const kic = shown[2][1];
  const kiu = shown[3][1];
  assert.ok(kic > 1 && kic < 4 && kiu > 4 && kiu < 12, `Kic ${kic}, Kiu ${kiu}`);

  // Every plot is drawn; the family plots show several colours (one per [I] or [S]).
  for (const kind of PLOTS) {
    assert.equal(await page.getAttribute(`#plot-${kind}`, 'data-drawn'), 'yes', kind);
    const { inked, hues } = await canvasColours(page, `plot-${kind}`);
    assert.ok(inked > 2000, `${kind}: only ${inked} inked pixels`);
    const minimum = kind.endsWith('replot') ? 2 : 4;
    assert.ok(hues >= minimum, `${kind}: ${hues} colours, expected at least ${minimum}`);
  }
  const direct = await page.evaluate(() => window.turnover.inhibition.lastResult().plots.find((p) => p.kind === 'inhibition-direct'));
  assert.equal(direct.series.length, 5, 'one curve per [I]');
  assert.deepEqual(direct.series.map((s) => s.label), ['[I] = 0 µM', '[I] = 1 µM', '[I] = 2.5 µM', '[I] = 5 µM', '[I] = 10 µM']);

  const panel = await page.$('#inhibition-panel');
  await panel.screenshot({ path: join(shotDir, 'inhibition-panel.png') });
  assert.deepEqual(errors, []);
  assert.deepEqual(external, []);
  await page.close();
});

test('the long layout of the demo gives the same constants as the matrix', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await loadDemo(page);
  const matrix = await page.evaluate(() => window.turnover.inhibition.lastResult().fits);
  const text = await page.inputValue('#inhibition-input');
  const lines = text.split('\n').filter((l) => l.trim() && !l.startsWith('#'));
  const levels = lines[0].split('\t').slice(1).map((h) => parseFloat(h));
  const long = ['[S] (mM)\t[I] (µM)\tv (µM/min)'];
  for (const line of lines.slice(1)) {
    const cells = line.split('\t');
    cells.slice(1).forEach((v, k) => long.push(`${cells[0]}\t${levels[k]}\t${v}`));
  }
  await page.fill('#inhibition-input', long.join('\n') + '\n');
  await page.click('#analyse');
  await page.waitForFunction(() => window.turnover.inhibition.lastResult()?.layout === 'long', null, { timeout: 20_000 });
  const longFits = await page.evaluate(() => window.turnover.inhibition.lastResult().fits);
  for (const [k, fit] of matrix.entries()) {
    for (const [j, p] of fit.parameters.entries()) {
      assert.equal(longFits[k].parameters[j].value, p.value, `${fit.model} ${p.name}`);
    }
  }
  assert.deepEqual(errors, []);
  await page.close();
});

test('rates reported per second: Vmax is the per-minute Vmax over 60, the other constants unchanged, the unit and a note say so', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await loadDemo(page);
  const perMinute = await page.evaluate(() => window.turnover.inhibition.lastResult());
  await page.selectOption('#inhibition-rate-time', 's');
  await page.waitForFunction(() => window.turnover.inhibition.lastResult()?.units?.rate === 'µM/s', null, { timeout: 20_000 });
  const perSecond = await page.evaluate(() => window.turnover.inhibition.lastResult());
  for (const [k, fit] of perMinute.fits.entries()) {
    for (const [j, p] of fit.parameters.entries()) {
      const q = perSecond.fits[k].parameters[j];
      const expected = p.name === 'Vmax' ? p.value / 60 : p.value;
      // The solver works on numbers 60 times apart and stops at its own
      // convergence test, so the two fits agree to far below the
      // uncertainty, not bit for bit: within a millionth of the SE.
      const se = p.name === 'Vmax' ? p.std_error / 60 : p.std_error;
      assert.ok(Math.abs(q.value - expected) <= 1e-6 * se, `${fit.model} ${p.name}: ${q.value} against ${expected} (SE ${se})`);
    }
  }
  assert.ok(perSecond.notes.some((n) => /Rates are reported per s: v in µM\/min ÷ 60/.test(n)), perSecond.notes.join(' | '));
  // Undo puts the rates back per minute.
  await page.keyboard.press('Control+z');
  await page.waitForFunction(() => window.turnover.inhibition.lastResult()?.units?.rate === 'µM/min', null, { timeout: 20_000 });
  assert.deepEqual(errors, []);
  await page.close();
});

test('tables go to the section they belong to; an empty section stays quiet; a bad series says why', { timeout: 60_000 }, async () => {
  const { page, errors } = await openPage();
  await loadDemo(page);
  // A rate table pasted into the inhibitor-series input is moved to the rate section.
  const rates = '[S] (mM)\tv (µM/min)\n0.1\t1\n0.5\t3\n1\t4\n';
  await page.fill('#inhibition-input', rates);
  assert.equal(await page.inputValue('#data-input'), rates);
  assert.equal(await page.inputValue('#inhibition-input'), '', 'the demo left with the person’s table');
  assert.match(await page.textContent('#inhibition-move-note'), /rate table .* now in the rate section.*demo data left/);
  // Emptied, the section stays quiet.
  await page.fill('#inhibition-input', '');
  await page.click('#analyse');
  await page.waitForFunction(() => document.querySelector('#inhibition-results').hidden, null, { timeout: 10_000 });
  // An inhibitor series pasted into the rate input goes to this section.
  await page.fill('#data-input', '[S]\t[I]\tv\n0.1\t0\t1\n');
  assert.equal(await page.inputValue('#inhibition-input'), '[S]\t[I]\tv\n0.1\t0\t1\n');
  assert.equal(await page.inputValue('#data-input'), rates);
  await page.click('#analyse');
  await page.waitForFunction(() => document.querySelector('#inhibition-status').dataset.state === 'error', null, { timeout: 10_000 });
  assert.match(await page.textContent('#inhibition-status'), /No inhibition analysis: .*usable point/);
  assert.deepEqual(errors.filter((e) => !/plot/.test(e)), []);
  await page.close();
});
