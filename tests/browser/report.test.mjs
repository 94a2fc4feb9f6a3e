// Results that leave the page: CSV files at full precision, the methods
// paragraph, and the printed report.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';

import { launch, pageUrl, shotDir } from './harness.mjs';

let browser;

before(async () => {
  browser = await launch('report', { acceptDownloads: true });
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

/** A minimal RFC 4180 reader: quoted fields with doubled quotes. */
function parseCsv(text) {
  const rows = [];
  let row = [];
  let field = '';
  let quoted = false;
  for (let k = 0; k < text.length; k++) {
    const c = text[k];
    if (quoted) {
      if (c === '"' && text[k + 1] === '"') { field += '"'; k++; } else if (c === '"') quoted = false; else field += c;
    } else if (c === '"') quoted = true;
    else if (c === ',') { row.push(field); field = ''; } else if (c === '\n') { row.push(field.replace(/\r$/, '')); rows.push(row); row = []; field = ''; } else field += c;
  }
  return rows;
}

async function downloaded(page, selector) {
  const [download] = await Promise.all([page.waitForEvent('download'), page.click(selector)]);
  const path = join(shotDir, download.suggestedFilename());
  await download.saveAs(path);
  return parseCsv(readFileSync(path, 'utf8'));
}

// An invented table (not measured data).
const TABLE = `[S] (µM)\tv (nM/s)
2\t0.91
5\t1.93
10\t3.18
20\t4.71
50\t6.52
100\t7.38
200\t8.04
`;

test('CSV exports read back to the JSON numbers exactly; the rate columns pasted back give the same fit', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  await page.fill('#data-input', TABLE);
  await page.fill('#enzyme', '5');
  await page.selectOption('#interval-method', 'profile');
  const result = await page.evaluate(() => window.turnover.lastResult());
  const constants = await downloaded(page, '#rates-csv-constants');
  assert.deepEqual(constants[0].slice(0, 6), ['model', 'constant', 'estimate', 'std_error', 'ci_low', 'ci_high']);
  for (const p of result.fit.parameters) {
    const row = constants.find((r) => r[1] === p.name);
    assert.ok(row, `no row for ${p.name}`);
    assert.equal(Number(row[2]), p.value, `${p.name} estimate to full precision`);
    assert.equal(Number(row[3]), p.std_error, `${p.name} SE to full precision`);
    assert.equal(Number(row[4]), p.ci_low, `${p.name} interval low`);
    assert.equal(Number(row[5]), p.ci_high, `${p.name} interval high`);
  }
  const points = await downloaded(page, '#rates-csv-points');
  assert.deepEqual(points[0].slice(0, 3), ['line', 's (µM)', 'v (nM/s)']);
  assert.equal(points.length - 1, result.points.length);
  for (const [k, p] of result.points.entries()) {
    assert.equal(Number(points[k + 1][3]), p.fitted, 'fitted values to full precision');
    assert.equal(Number(points[k + 1][4]), p.residual, 'residuals to full precision');
  }
  // The [S] and v columns, pasted back as a table, give the same fit.
  const back = [`[S] (µM)\tv (nM/s)`, ...points.slice(1).map((r) => `${r[1]}\t${r[2]}`)].join('\n');
  await page.fill('#data-input', `${back}\n`);
  const again = await page.evaluate(() => window.turnover.lastResult());
  for (const [k, p] of result.fit.parameters.entries()) assert.equal(again.fit.parameters[k].value, p.value, `${p.name} after pasting the columns back`);
  assert.deepEqual(errors, []);
  await page.close();
});

test('the methods paragraph names the model, weighting, interval method, n and version of the analysis shown', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  await page.fill('#data-input', TABLE);
  // Results follow typing after a pause; ask for them now.
  const methods = async () => {
    await page.evaluate(() => window.turnover.analyse());
    return page.textContent('#method');
  };
  const version = await page.textContent('#version');
  let text = await methods();
  assert.match(text, /v = Vmax·\[S\] \/ \(Km \+ \[S\]\)/, 'the model');
  assert.match(text, /equal weights/);
  assert.match(text, /estimate ± t\(0\.975, n − p\)·SE/);
  assert.match(text, /n = 7 /);
  assert.ok(text.includes(`Turnover ${version}`), 'the version');
  await page.selectOption('#weighting', 'relative');
  text = await methods();
  assert.match(text, /weights 1\/v²/);
  await page.selectOption('#interval-method', 'profile');
  assert.match(await methods(), /profile-likelihood/);
  // Leave a point out: n changes and the line is named.
  const line = (await page.evaluate(() => window.turnover.lastResult().points[6].line));
  await page.click(`#points-table tr[data-line="${line}"]`);
  text = await methods();
  assert.match(text, /n = 6 /);
  assert.match(text, new RegExp(`input line ${line}\\)`));
  assert.deepEqual(errors, []);
  await page.close();
});

test('the demo analysis prints on at most 3 A4 pages with no control visible', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  await page.click('#load-demo');
  await page.evaluate(() => window.dispatchEvent(new Event('beforeprint')));
  await page.emulateMedia({ media: 'print' });
  const visible = await page.evaluate(() => [...document.querySelectorAll('input, select, button, textarea')]
    .filter((el) => el.getClientRects().length > 0 && getComputedStyle(el).visibility !== 'hidden').map((el) => el.id || el.tagName));
  assert.deepEqual(visible, [], 'no input, select, button or text box is printed');
  const pdf = await page.pdf({ format: 'A4' });
  const pages = (pdf.toString('latin1').match(/\/Type\s*\/Page[^s]/g) ?? []).length;
  assert.ok(pages >= 1 && pages <= 3, `${pages} pages`);
  const printed = await page.evaluate(() => document.querySelector('#print-heading').textContent);
  assert.match(printed, /DEMO DATA/, 'a printed demo says it is one');
  assert.match(await page.textContent('#checklist'), /Assay temperature\s*30 °C/);
  assert.deepEqual(errors, []);
  await page.close();
});
