// Inputs the page must read exactly as written or report, in every
// section, with the same rules as the command line (the core's): numbers
// whose format is ambiguous, spreadsheet error cells, quoted CSV, files in
// other encodings, quantities with units in fields, contradictions. In
// every case the person's text stays in the document as typed.

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { writeFileSync, existsSync } from 'node:fs';
import { join, resolve, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execFileSync } from 'node:child_process';

import { launch, pageUrl, shotDir } from './harness.mjs';

const here = dirname(fileURLToPath(import.meta.url));

let browser;

before(async () => {
  browser = await launch('inputs');
});

after(async () => {
  if (browser) await browser.close();
});

async function open() {
  const page = await browser.context.newPage();
  const errors = [];
  page.on('pageerror', (err) => errors.push(String(err?.stack ?? err)));
  await page.goto(pageUrl);
  await page.waitForFunction(() => window.turnover?.lastResult?.() && window.turnoverTraces?.lastResult());
  return { page, errors };
}

const problemsText = (page) => page.evaluate(() => {
  window.turnover.analyse();
  return document.querySelector('#input-problems').textContent;
});
const constants = (page) => page.evaluate(() => {
  window.turnover.analyse();
  return Object.fromEntries([...document.querySelectorAll('#parameters tr[data-param]')].map((r) => [r.dataset.param, r.dataset.value]));
});

// Invented rates (not measured data), in µM and µM/min.
const ROWS = [[2, 0.91], [5, 1.93], [10, 3.18], [20, 4.71], [50, 6.52], [100, 7.38], [200, 8.04]];
const TABLE = `[S] (µM)\tv (µM/min)\n${ROWS.map(([s, v]) => `${s}\t${v}`).join('\n')}\n`;

// Each case: a table, and what the page must report about it. The rate
// fit goes on with the lines it can read.
const TABLE_CASES = [
  ['a comma that could group thousands or mark decimals, with no decimal point anywhere to tell',
    `[S] (nM)\tv (nM/min)\n500\t31\n1,000\t46\n2,500\t69\n5000\t80\n10000\t86\n`, /line 3, column 1: .*1,000/],
  ['a spreadsheet error cell at the start of a row', `${TABLE}#DIV/0!\t5.5\n`, /line 9, column 1: .*#DIV\/0!/],
  ['an error cell in the rate column', `${TABLE}300\t#N/A\n`, /line 9, column 2: .*#N\/A/],
  ['a percentage in a number column', `${TABLE}400\t8.5%\n`, /line 9, column 2/],
];

test('table inputs that are not read exactly as written are reported by line and column; the document keeps the text', { timeout: 90_000 }, async () => {
  const { page, errors } = await open();
  for (const [what, text, expected] of TABLE_CASES) {
    await page.fill('#data-input', text);
    const problems = await problemsText(page);
    assert.match(problems, expected, what);
    assert.equal(await page.evaluate(() => window.turnover.doc().rates.text), text, `${what}: the text is kept as typed`);
  }
  // With decimal points elsewhere in the table, 1,000 can only be one thousand.
  await page.fill('#data-input', `[S] (nM)\tv (nM/min)\n500\t3.1\n1,000\t4.6\n2,500\t6.9\n5000\t8.0\n10000\t8.6\n`);
  const grouped = await constants(page);
  await page.fill('#data-input', `[S] (nM)\tv (nM/min)\n500\t3.1\n1000\t4.6\n2500\t6.9\n5000\t8.0\n10000\t8.6\n`);
  assert.deepEqual(await constants(page), grouped, '1,000 and 2,500 read as thousands beside decimal points');
  // Quoted CSV fields are read, not refused.
  const quoted = `"[S] (µM)","v (µM/min)"\n${ROWS.map(([s, v]) => `"${s}","${v}"`).join('\n')}\n`;
  await page.fill('#data-input', quoted);
  const fromQuoted = await constants(page);
  await page.fill('#data-input', TABLE);
  assert.deepEqual(await constants(page), fromQuoted, 'quoted CSV gives the same fit as the tab-separated table');
  assert.deepEqual(errors, []);
  await page.close();
});

test('number fields use the same rule as the command line: ambiguous numbers, units and contradictions', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  await page.fill('#data-input', TABLE);
  await page.fill('#enzyme', '25');
  await page.selectOption('#enzyme-unit', 'nM');
  const plain = await constants(page);
  assert.ok(plain.kcat, 'kcat with [E]t 25 nM');
  // The unit typed in the field, as on the command line.
  await page.fill('#enzyme', '25 nM');
  assert.equal((await constants(page)).kcat, plain.kcat, "'25 nM' in the field gives the same kcat");
  // A unit that contradicts the menu is refused with the reason.
  await page.fill('#enzyme', '25 pM');
  let problems = await problemsText(page);
  assert.match(problems, /\[E\]t: '25 pM' is in pM but the unit menu beside it says nM/);
  assert.equal((await constants(page)).kcat, undefined, 'no kcat from a contradiction');
  // An ambiguous number is refused, never read as 1.0 or 1000 silently.
  await page.fill('#enzyme', '1,000');
  problems = await problemsText(page);
  assert.match(problems, /\[E\]t: .*1,000.*could be/);
  assert.equal((await constants(page)).kcat, undefined);
  assert.equal(await page.evaluate(() => window.turnover.doc().rates.enzyme), '1,000', 'the field keeps what was typed');
  // A decimal comma alone is read.
  await page.fill('#enzyme', '2,5');
  assert.ok((await constants(page)).kcat);
  // The time-course section's fields follow the same rule.
  await page.click('#traces-demo');
  await page.fill('#tr-epsilon', '6,220');
  await page.click('#traces-analyse');
  await page.waitForFunction(() => document.querySelector('#traces-status').dataset.state === 'error');
  assert.match(await page.textContent('#traces-status'), /The ε: .*6,220.*could be/);
  assert.deepEqual(errors, []);
  await page.close();
});

test('a file in UTF-16 or Windows-1252 opens as the same table as in UTF-8; a guessed encoding is said', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  await page.fill('#data-input', TABLE);
  const expected = await constants(page);
  // UTF-16 little-endian with its byte-order mark, as some spreadsheet
  // programs save "Unicode text".
  const utf16 = join(shotDir, 'rates-utf16.txt');
  writeFileSync(utf16, Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(TABLE, 'utf16le')]));
  await page.fill('#data-input', '');
  await page.setInputFiles('#file-input', utf16);
  await page.waitForFunction((text) => document.querySelector('#data-input').value === text, TABLE);
  assert.deepEqual(await constants(page), expected, 'UTF-16 with its byte-order mark reads exactly, with nothing to say');
  // Windows-1252: µ is one byte, 0xB5.
  const latin = join(shotDir, 'rates-1252.txt');
  writeFileSync(latin, Buffer.from(TABLE.replace(/µ/g, '\u00b5'), 'latin1'));
  await page.fill('#data-input', '');
  await page.setInputFiles('#file-input', latin);
  await page.waitForFunction((text) => document.querySelector('#data-input').value === text, TABLE);
  assert.deepEqual(await constants(page), expected);
  assert.match(await page.textContent('#rates-move-note'), /1252/);
  assert.deepEqual(errors, []);
  await page.close();
});

test('the inhibitor-series section shows every problem the core reports, such as an unreadable matrix cell', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  await page.click('#load-inhibition-demo');
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#inhibition-status')?.dataset.state));
  const text = await page.inputValue('#inhibition-input');
  // Spoil one rate of the matrix: line 6 (after two comments and the header), the [I] = 2.5 µM column.
  const spoilt = text.split('\n').map((line, k) => (k === 5 ? line.split('\t').map((c, j) => (j === 3 ? 'n.d.' : c)).join('\t') : line)).join('\n');
  await page.fill('#inhibition-input', spoilt);
  await page.evaluate(() => window.turnover.analyse());
  await page.waitForFunction(() => /line 6, column 4/.test(document.querySelector('#inhibition-warnings').textContent));
  assert.match(await page.textContent('#inhibition-status'), /1 cell\(s\) or line\(s\) not used/);
  assert.deepEqual(errors, []);
  await page.close();
});

// The awkward inputs of the command line's table (crates/cli/tests), in
// the page: each gives a message that says what is wrong (or a fit, for
// inputs that are fine), the text stays in the document as typed, and no
// number shown is "NaN" or "Infinity".
const AWKWARD = [
  ['empty input', '', /No table yet/],
  ['one point', 'S\tv\n1\t2\n', /only 1 usable point/],
  ['fewer points than parameters', 'S\tv\n1\t2\n2\t3\n', /only 2 usable point/],
  ['all [S] equal', 'S\tv\n1\t2\n1\t2.1\n1\t1.9\n', /only 1 distinct \[S\]/],
  ['all rates equal', 'S\tv\n1\t5\n2\t5\n4\t5\n8\t5\n', /every response is 5/],
  ['negative rates', 'S\tv\n1\t-1\n2\t-2\n3\t-2.5\n', /positive/],
  ['NaN, Inf, n/a and dash cells', `${TABLE}300\tNaN\n400\tInf\n500\tn/a\n600\t—\n`, /line 9, column 2.*line 10, column 2.*line 11, column 2.*line 12, column 2/s],
  ['a ragged row', `${TABLE}300\n`, /line 9: expected 2 columns, found 1/],
  ['an unknown unit', '[S] (furlongs)\tv (µM/min)\n1\t2\n2\t3\n5\t4\n10\t4.5\n', /furlongs/],
  ['binary garbage', '\u0000\u0001\u0002\u00ff\u00fe\n\u0007\u0008', /./],
];

test('awkward tables give a message that says what is wrong, and nothing non-finite is shown', { timeout: 120_000 }, async () => {
  const { page, errors } = await open();
  for (const [what, text, expected] of AWKWARD) {
    await page.fill('#data-input', text);
    const shown = await page.evaluate(() => {
      window.turnover.analyse();
      return {
        status: document.querySelector('#status').textContent,
        problems: `${document.querySelector('#input-problems').textContent} ${document.querySelector('#notes').textContent}`,
        params: document.querySelector('#parameters').textContent,
        stats: document.querySelector('#fit-stats').textContent,
        kept: window.turnover.doc().rates.text,
      };
    });
    assert.match(`${shown.status} ${shown.problems}`, expected, what);
    assert.equal(shown.kept, text, `${what}: the text is kept as typed`);
    assert.doesNotMatch(`${shown.params} ${shown.stats}`, /NaN|Infinity/, `${what}: nothing non-finite is shown`);
  }
  // Values from 1e-15 to 1e15 are read and fitted (concentrations in M,
  // rates in M/s of an invented enzyme), with nothing non-finite shown.
  await page.fill('#data-input', '[S] (M)\tv (M/s)\n1e-15\t3.1e-16\n1e-12\t2.9e-13\n1e-9\t2.4e-10\n1e-6\t1.2e-7\n1e-3\t1.5e-4\n1\t1.5e-4\n1e3\t1.5e-4\n1e15\t1.5e-4\n');
  const wide = await page.evaluate(() => {
    window.turnover.analyse();
    return { status: document.querySelector('#status').textContent, text: document.querySelector('#parameters').textContent };
  });
  assert.doesNotMatch(wide.text, /NaN|Infinity/);
  assert.ok(wide.status.length > 10, wide.status);
  assert.deepEqual(errors, []);
  await page.close();
});

test('specific activity from the protein concentration, [E]t from the molar mass, rates per second: the core’s rule, and contradictions refused', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  await page.fill('#data-input', TABLE);
  const params = (p) => page.evaluate(() => {
    window.turnover.analyse();
    return Object.fromEntries(window.turnover.lastResult().fit.parameters.map((q) => [q.name, q]));
  });
  const plain = await params(page);
  await page.fill('#protein', '0.05');
  let p = await params(page);
  // 0.05 mg/mL = 50 mg/L; Vmax in µM/min is µmol L⁻¹ min⁻¹, so specific
  // activity = Vmax/50 µmol min⁻¹ mg⁻¹, its SE and interval scaled alike
  // (the protein taken as exact; arithmetic by hand).
  const sa = p['specific activity'];
  assert.ok(Math.abs(sa.value - plain.Vmax.value / 50) <= 1e-12 * sa.value, `${sa.value}`);
  assert.ok(Math.abs(sa.std_error - plain.Vmax.std_error / 50) <= 1e-12 * sa.std_error);
  assert.equal(p.kcat, undefined, 'no kcat without [E]t or a molar mass');
  // With a molar mass of 42 kDa: [E]t = 50 mg/L / 42,000 g/mol = 1.190476 µM,
  // kcat = Vmax / [E]t per minute, /60 per second.
  await page.fill('#molar-mass', '42');
  p = await params(page);
  const et = 0.05 / 42000 * 1e6;
  assert.ok(Math.abs(p.kcat.value - plain.Vmax.value / et / 60) <= 1e-9 * p.kcat.value, `kcat ${p.kcat.value}`);
  assert.match(await page.textContent('#method'), /protein concentration \(0\.05 mg\/mL\) and the molar mass \(42 kDa\)/);
  // [E]t typed as well as a molar mass: said, and neither used.
  await page.fill('#enzyme', '25');
  assert.match(await problemsText(page), /Give \[E\]t or the molar mass/);
  p = await params(page);
  assert.equal(p['specific activity'], undefined);
  await page.fill('#enzyme', '');
  await page.fill('#molar-mass', '');
  // Rates per second: Vmax is the per-minute value divided by 60.
  await page.selectOption('#rate-time', 's');
  p = await params(page);
  assert.ok(Math.abs(p.Vmax.value - plain.Vmax.value / 60) <= 1e-9 * p.Vmax.value, `Vmax ${p.Vmax.value}`);
  assert.deepEqual(errors, []);
  await page.close();
});

test('rates per mass of protein (U/mg): Vmax in µmol/min/mg, kcat from the molar mass alone; a molar mass that cannot be used is said', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  const fitted = () => page.evaluate(() => {
    window.turnover.analyse();
    const r = window.turnover.lastResult();
    return {
      params: Object.fromEntries(r.fit.parameters.map((q) => [q.name, q])),
      rate: r.units.rate,
      warnings: [...document.querySelectorAll('#warnings li')].map((li) => li.textContent),
      unitShown: document.querySelector('#parameters tr[data-param="Vmax"]').textContent,
      method: document.querySelector('#method').textContent,
    };
  });
  // The same numbers as TABLE, headed as specific activities.
  await page.fill('#data-input', TABLE.replace('v (µM/min)', 'v (U/mg)'));
  const bare = await fitted();
  assert.equal(bare.rate, 'µmol/min/mg');
  assert.match(bare.unitShown, /µmol\/min\/mg/);
  assert.equal(bare.params.kcat, undefined);
  // 50 kDa: kcat = Vmax × 50,000 g/mol / 60,000 (U/mg is 1/60,000 mol s⁻¹ g⁻¹; by hand).
  await page.fill('#molar-mass', '50');
  const withMass = await fitted();
  assert.ok(Math.abs(withMass.params.kcat.value - bare.params.Vmax.value * 50000 / 60000) <= 1e-12 * withMass.params.kcat.value, `kcat ${withMass.params.kcat.value}`);
  assert.ok(withMass.params['kcat/Km']);
  assert.match(withMass.method, /kcat = Vmax × molar mass \(50 kDa\) with Vmax a specific activity \(µmol\/min\/mg\)/);
  assert.deepEqual(await problemsText(page), '');
  // The unit chosen in the menu instead of the header: the same.
  await page.fill('#data-input', TABLE.replace('v (µM/min)', 'v'));
  await page.selectOption('#rate-unit', 'µmol/min/mg');
  const menu = await fitted();
  assert.equal(menu.params.kcat.value, withMass.params.kcat.value);
  // Rates per volume with the molar mass alone: not used, and said.
  await page.selectOption('#rate-unit', 'µM/min');
  const perVolume = await fitted();
  assert.equal(perVolume.params.kcat, undefined);
  assert.ok(perVolume.warnings.some((w) => /^The molar mass is not used: it needs the protein concentration beside it/.test(w)), perVolume.warnings.join(' | '));
  assert.deepEqual(errors, []);
  await page.close();
});

test('an export with two kinetic tables offers the choice; the second table read gives its own rates; replicates are summarised', { timeout: 90_000 }, async () => {
  const { page, errors } = await open();
  // Invented readings (not measured data): three wells read at two
  // wavelengths, the second read rising twice as fast.
  const block = (slope) => ['Time (min)\tA1\tA2\tA3', ...[0, 0.5, 1, 1.5, 2, 2.5].map((t) => [t, ...[1, 0.5, 0.2].map((k) => (0.05 + slope * k * t).toFixed(4))].join('\t'))].join('\n');
  const text = `Read 1\tWavelength 340 nm\n${block(0.1)}\n\nRead 2\tWavelength 405 nm\n${block(0.2)}\n`;
  await page.fill('#traces-input', text);
  await page.fill('#layout-input', 'trace\tS (µM)\nA1\t100\nA2\t50\nA3\t10\n');
  await page.selectOption('#tr-conversion', 'none');
  await page.evaluate(() => window.turnoverTraces.analyse());
  await page.waitForFunction(() => window.turnoverTraces.current());
  const first = await page.evaluate(() => window.turnoverTraces.lastResult());
  assert.equal(first.blocks.length, 2);
  assert.equal(await page.isVisible('#tr-block'), true);
  const labels = await page.$$eval('#tr-block option', (os) => os.map((o) => o.textContent));
  assert.match(labels[2], /^2: Read 2 Wavelength 405 nm \(lines 11–17, 6 readings of 3 traces\)/);
  await page.selectOption('#tr-block', '2');
  await page.evaluate(() => window.turnoverTraces.analyse());
  await page.waitForFunction(() => window.turnoverTraces.current());
  const second = await page.evaluate(() => window.turnoverTraces.lastResult());
  const rate = (r, name) => r.traces.find((t) => t.name === name).rate;
  assert.ok(Math.abs(rate(second, 'A1') / rate(first, 'A1') - 2) < 1e-9, `${rate(second, 'A1')} vs ${rate(first, 'A1')}`);
  assert.equal(await page.evaluate(() => window.turnover.doc().traces.block), '2');
  // Replicates in columns: the page shows each [S]'s mean, SD and SEM from the core.
  await page.fill('#data-input', '[S] (µM)\tv rep 1 (µM/min)\tv rep 2\tv rep 3\n2\t0.90\t0.95\t0.88\n5\t1.90\t1.97\t1.95\n10\t3.1\t3.2\t3.25\n20\t4.6\t4.8\t4.7\n50\t6.5\t6.6\t6.4\n');
  await page.evaluate(() => window.turnover.analyse());
  const rows = await page.$$eval('#replicates-box tbody tr', (trs) => trs.map((tr) => [Number(tr.dataset.concentration), Number(tr.dataset.mean)]));
  assert.equal(await page.isHidden('#replicates-box'), false);
  assert.deepEqual(rows.map(([s]) => s), [2, 5, 10, 20, 50]);
  assert.ok(Math.abs(rows[0][1] - (0.90 + 0.95 + 0.88) / 3) < 1e-12);
  assert.deepEqual(errors, []);
  await page.close();
});

test('a spreadsheet (.xlsx) opens in the page through the core’s sheet reader: the same constants as the command line’s --sheet, the other sheet offered by name and read when chosen', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  const fixture = join(here, 'fixtures', 'rates.xlsx');
  await page.setInputFiles('#file-input', fixture);
  await page.waitForFunction(() => document.querySelector('#data-input').value.startsWith('[S] (µM)'));
  const shown = await constants(page);
  assert.match(await page.textContent('#rates-move-note'), /sheet “rates” read.*1 other sheet with data: choose below/);
  // The other sheet is offered by name; choosing it reads it into the box
  // (it holds run notes, not rates, so the fit says so), and choosing the
  // first again gives the same constants as before.
  assert.equal(await page.isHidden('#rates-sheet-choice'), false);
  assert.deepEqual(await page.$$eval('#rates-sheet-choice-select option', (o) => o.map((x) => x.value)), ['rates', 'notes']);
  await page.selectOption('#rates-sheet-choice-select', 'notes');
  await page.waitForFunction(() => document.querySelector('#data-input').value.startsWith('assay'));
  assert.match(await page.textContent('#rates-move-note'), /sheet “notes” read/);
  await page.selectOption('#rates-sheet-choice-select', 'rates');
  await page.waitForFunction(() => document.querySelector('#data-input').value.startsWith('[S] (µM)'));
  assert.deepEqual(await constants(page), shown);
  // The same table typed in gives the same constants, bit for bit.
  await page.fill('#data-input', TABLE);
  assert.deepEqual(await constants(page), shown);
  const bin = resolve(process.env.TURNOVER_BIN ?? join(here, '..', '..', 'target', 'release', 'turnover'));
  if (existsSync(bin)) {
    const cli = JSON.parse(execFileSync(bin, ['fit', fixture, '--sheet', 'rates', '--json']).toString());
    // The page's WebAssembly and the host's libm may differ in the last bit.
    for (const p of cli.parameters.filter((q) => q.name in shown)) assert.ok(Math.abs(Number(shown[p.name]) - p.value) <= 1e-9 * Math.abs(p.value), `${p.name}`);
  }
  // A file that is not a workbook Turnover reads is refused with the reason.
  const fake = join(shotDir, 'not-a-workbook.xlsx');
  writeFileSync(fake, 'plain text, not a zip');
  await page.setInputFiles('#file-input', fake);
  await page.waitForFunction(() => /not-a-workbook\.xlsx/.test(document.querySelector('#input-problems').textContent));
  assert.deepEqual(errors, []);
  await page.close();
});

test('a small, noisy data set: the bias-corrected Km (Box 1971, from the core) is shown under the estimate where the bias is worth a tenth of its SE, and nowhere else', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  // Six invented rates with about 8 % scatter (not measurements): the
  // command line prints Km = 11.2 ± 2.7 µM with a bias of +0.3 µM here.
  const text = '[S] (µM)\tv (µM/min)\n2\t0.95\n5\t1.70\n10\t3.10\n20\t3.60\n40\t5.30\n80\t5.10\n';
  await page.fill('#data-input', text);
  await constants(page);
  const fit = await page.evaluate(() => window.turnover.lastResult().fit.parameters);
  const rows = await page.evaluate(() => Object.fromEntries([...document.querySelectorAll('#parameters tr[data-param]')].map((r) => [r.dataset.param, {
    corrected: r.dataset.biasCorrected ?? null, text: r.querySelector('.bias-corrected')?.textContent ?? null,
  }])));
  for (const p of fit) {
    const shown = p.value_bias_corrected !== null && Math.abs(p.bias) > 0.1 * p.std_error;
    assert.equal(rows[p.name].corrected !== null, shown, `${p.name}: bias ${p.bias}, SE ${p.std_error}`);
    if (shown) {
      assert.equal(Number(rows[p.name].corrected), p.value_bias_corrected);
      assert.ok(Math.abs(p.value - p.bias - p.value_bias_corrected) <= 1e-12 * Math.abs(p.value), `${p.name}: value − bias`);
    }
  }
  assert.equal(rows.Km.text, 'bias-corrected 10.9');
  assert.equal(rows.Vmax.corrected, null, 'Vmax’s bias is under a tenth of its SE');
  const bin = resolve(process.env.TURNOVER_BIN ?? join(here, '..', '..', 'target', 'release', 'turnover'));
  if (existsSync(bin)) {
    const file = join(shotDir, 'small-noisy.tsv');
    writeFileSync(file, text);
    const cli = JSON.parse(execFileSync(bin, ['fit', file, '--json']).toString());
    const km = cli.parameters.find((p) => p.name === 'Km');
    // The page's WebAssembly and the host's libm may differ in the last bits.
    assert.ok(Math.abs(km.value_bias_corrected - Number(rows.Km.corrected)) <= 1e-8 * km.value_bias_corrected);
  }
  assert.deepEqual(errors, []);
  await page.close();
});

test('a unit in the header that is not read is said in the notes, and the constants say no unit was read (not that none was given)', { timeout: 60_000 }, async () => {
  const { page, errors } = await open();
  // Rates as absorbance per minute, common from a plate reader, are not a
  // concentration per time: the unit must not vanish silently.
  await page.fill('#data-input', TABLE.replace('v (µM/min)', 'v (mAU/min)'));
  await page.evaluate(() => window.turnover.analyse());
  const notes = await page.textContent('#notes');
  assert.match(notes, /unit for v was not understood.*mAU\/min/);
  const units = await page.evaluate(() => Object.fromEntries([...document.querySelectorAll('#parameters tr[data-param]')].map((r) => [r.dataset.param, r.querySelector('td.unit').textContent])));
  assert.equal(units.Vmax, '(no unit read)');
  assert.equal(units.Km, 'µM');
  assert.deepEqual(errors, []);
  await page.close();
});
