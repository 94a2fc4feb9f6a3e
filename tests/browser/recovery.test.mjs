// An internal error of the WebAssembly core (a panic, which aborts the
// module) must not cost the person their work: the page keeps the
// document, starts a fresh module from the same bytes and derives every
// result again; the next action works. Tested on the page built with the
// test-only export `panicForTest` (feature test-hooks of turnover-wasm;
// build.sh writes target/turnover-test-hooks.html, never dist/).

import { test, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync } from 'node:fs';
import { join, resolve, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

import { launch, shotDir } from './harness.mjs';

const here = dirname(fileURLToPath(import.meta.url));
const hooksPage = resolve(process.env.TURNOVER_TEST_HOOKS_HTML ?? join(here, '..', '..', 'target', 'turnover-test-hooks.html'));

let browser;

before(async () => {
  assert.ok(existsSync(hooksPage), `the test-hooks page is not built: ${hooksPage} (./build.sh test builds it)`);
  browser = await launch('recovery');
});

after(async () => {
  if (browser) await browser.close();
});

const constants = (page) => page.evaluate(() => {
  window.turnover.analyse();
  return Object.fromEntries([...document.querySelectorAll('#parameters tr[data-param]')].map((r) => [r.dataset.param, r.dataset.value]));
});

test('a panic in the core keeps the document, restarts the core and the next action works', { timeout: 60_000 }, async () => {
  const page = await browser.context.newPage();
  const errors = [];
  page.on('pageerror', (err) => errors.push(String(err?.stack ?? err)));
  await page.goto(pathToFileURL(hooksPage).href);
  await page.waitForFunction(() => window.turnover?.doc?.() && window.turnoverTraces?.lastResult());
  // An invented table (not measured data).
  await page.fill('#data-input', '[S] (µM)\tv (nM/s)\n5\t2.0\n10\t3.5\n20\t5.4\n50\t8.1\n100\t9.5\n200\t10.4\n');
  await page.fill('#enzyme', '2');
  const doc = await page.evaluate(() => window.turnover.doc());
  const shown = await constants(page);
  const thrown = await page.evaluate(() => {
    try {
      wasm_bindgen.panicForTest();
      return 'nothing thrown';
    } catch (error) {
      return `${error.constructor.name}: ${error.message}`;
    }
  });
  assert.match(thrown, /^RuntimeError/, 'the core aborted');
  await page.waitForFunction(() => /started again/.test(document.querySelector('#core-problem').textContent));
  assert.match(await page.textContent('#core-problem'), /deliberate panic/, 'the panic message is shown');
  assert.deepEqual(await page.evaluate(() => window.turnover.doc()), doc, 'the document is kept');
  assert.deepEqual(await constants(page), shown, 'the results are derived again, the same');
  // The next actions work on the fresh core: a new table, the inhibitor
  // demo, a time-course analysis.
  await page.fill('#data-input', '[S] (µM)\tv (nM/s)\n5\t1.0\n10\t1.8\n20\t3.0\n50\t4.9\n100\t6.1\n200\t7.0\n');
  assert.notEqual((await constants(page)).Km, shown.Km);
  await page.click('#load-inhibition-demo');
  await page.waitForFunction(() => ['ok', 'warn'].includes(document.querySelector('#inhibition-status')?.dataset.state));
  const traces = await page.evaluate(async () => (await window.turnoverTraces.analyse())?.traces.length ?? 0);
  await page.click('#traces-demo');
  const plate = await page.evaluate(async () => (await window.turnoverTraces.analyse())?.traces.length ?? 0);
  assert.ok(plate > 0, `the demo plate is analysed after the restart (${traces}, ${plate})`);
  await page.screenshot({ path: join(shotDir, 'recovered.png') });
  assert.deepEqual(errors, []);
  await page.close();
});
