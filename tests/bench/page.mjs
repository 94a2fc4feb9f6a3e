// Benchmark of the page, not a test: start-up, a 384-well plate, a
// 100,000-row rate table and the same fit in the page's WebAssembly and in
// the native command line, each printed with a reference measured in the
// same run. Run by `./build.sh bench` (tests/bench/run.sh) after bench.py.
//
//   node tests/bench/page.mjs PAGE.html TURNOVER_BIN
//
// Data are invented (simulated with a fixed seed), not measurements.

import { writeFileSync, mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { execFileSync } from 'node:child_process';
import { createRequire } from 'node:module';

const require = createRequire(join(resolve('tests/browser'), 'package.json'));
const { chromium } = require('playwright-core');
const [pagePath, bin] = process.argv.slice(2);
const dir = mkdtempSync(join(tmpdir(), 'turnover-bench-'));
const median = (xs) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

// The reference page: the same number of bytes, inert (a comment), so the
// ratio is the cost of Turnover's own start beyond reading the file.
const size = readFileSync(pagePath).length;
const blank = join(dir, 'blank.html');
writeFileSync(blank, `<!doctype html><meta charset="utf-8"><title>blank</title><script type="application/octet-stream">${'x'.repeat(size - 120)}</script><p>ready</p>`);

const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', headless: true, args: ['--no-sandbox', '--disable-gpu'] });

async function timeLoad(url, ready) {
  const times = [];
  for (let k = 0; k < 5; k++) {
    const context = await browser.newContext();
    const page = await context.newPage();
    const t0 = Date.now();
    await page.goto(url, { waitUntil: 'load' });
    await page.waitForFunction(ready, null, { timeout: 60_000 });
    times.push(Date.now() - t0);
    await context.close();
  }
  return median(times);
}

const started = () => window.turnover?.lastResult?.() && window.turnoverTraces?.lastResult?.();
const startup = await timeLoad(pathToFileURL(resolve(pagePath)).href, started);
const reference = await timeLoad(pathToFileURL(blank).href, () => document.readyState === 'complete');
console.log(`page start-up to both demos drawn: ${startup} ms; a blank page of the same size: ${reference} ms (ratio ${(startup / reference).toFixed(1)}; goal: start-up ≤ 300 ms)`);

// A 100,000-row rate table: the time to a fitted result in the page,
// the longest main-thread task, against the command line on the same file.
let seed = 7;
const uniform = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
const rows = ['[S] (µM)\tv (µM/min)'];
for (let k = 0; k < 100000; k++) {
  const s = 1 + 199 * uniform();
  rows.push(`${s.toFixed(3)}\t${((10 * s) / (20 + s) * (1 + 0.05 * (uniform() - 0.5))).toFixed(4)}`);
}
const big = `${rows.join('\n')}\n`;
const file = join(dir, 'rows.tsv');
writeFileSync(file, big);
const native = [];
for (let k = 0; k < 3; k++) {
  const t0 = process.hrtime.bigint();
  execFileSync(bin, ['fit', file, '--json'], { maxBuffer: 1 << 28 });
  native.push(Number(process.hrtime.bigint() - t0) / 1e6);
}
const context = await browser.newContext();
const page = await context.newPage();
await page.goto(pathToFileURL(resolve(pagePath)).href);
await page.waitForFunction(started, null, { timeout: 60_000 });
const inPage = await page.evaluate(async (text) => {
  const long = [];
  new PerformanceObserver((list) => { for (const e of list.getEntries()) long.push(e.duration); }).observe({ type: 'longtask' });
  const t0 = performance.now();
  const input = document.querySelector('#data-input');
  input.value = text;
  input.dispatchEvent(new Event('input', { bubbles: true }));
  // The paste: the browser lays out 100,001 lines in the text box, its
  // own work, in this task. The fit runs in the background from here.
  await new Promise((r) => requestAnimationFrame(() => setTimeout(r, 0)));
  const pasted = long.length;
  window.turnover.analyse();
  while (!window.turnover.lastResult()) await new Promise((r) => setTimeout(r, 10));
  const fitted = performance.now() - t0;
  await new Promise((r) => setTimeout(r, 500));
  const after = long.slice(pasted);
  return { fitted, paste: Math.max(0, ...long.slice(0, pasted)), longest: Math.max(0, ...after), over100: after.filter((d) => d > 100).map((d) => d.toFixed(0)) };
}, big);
console.log(`100,000-row rate table: fitted and drawn in ${inPage.fitted.toFixed(0)} ms, in a Web Worker; ${inPage.longest > 0 ? `longest main-thread task from the fit's start ${inPage.longest.toFixed(0)} ms (tasks over 100 ms: ${inPage.over100.join(', ') || 'none'})` : 'no main-thread task over 50 ms from the fit\'s start (the browser reports only longer ones)'}; the paste itself (the browser laying out the text box) ${inPage.paste.toFixed(0)} ms; the command line on the same file ${median(native).toFixed(0)} ms (ratio page/native ${(inPage.fitted / median(native)).toFixed(1)})`);

// The page's WebAssembly against native code: one 12-point
// Michaelis-Menten fit repeated, per fit.
const small = '[S] (µM)\tv (µM/min)\n1\t0.48\n2\t0.91\n4\t1.67\n6\t2.25\n8\t2.68\n10\t3.05\n15\t3.85\n20\t4.32\n30\t5.08\n50\t5.92\n80\t6.52\n120\t6.86\n';
const wasmPerFit = await page.evaluate((text) => {
  const bench = new wasm_bindgen.Workbench();
  const request = { text, model: 'mm', weighting: 'uniform', interval_method: 'asymptotic', excluded_lines: [], excluded_cells: [] };
  for (let k = 0; k < 50; k++) bench.analyse(request);
  const t0 = performance.now();
  for (let k = 0; k < 500; k++) bench.analyse(request);
  return (performance.now() - t0) / 500;
}, small);
writeFileSync(join(dir, 'small.tsv'), Array.from({ length: 500 }, (_, k) => small.split('\n').slice(1).filter(Boolean).map((l) => `c${k}\t${l}`).join('\n')).join('\n').replace(/^/, 'curve\t[S] (µM)\tv (µM/min)\n'));
const t0 = process.hrtime.bigint();
execFileSync(bin, ['fit', join(dir, 'small.tsv'), '--group-by', 'curve', '--threads', '1', '--format', 'json'], { maxBuffer: 1 << 28 });
const nativePerFit = Number(process.hrtime.bigint() - t0) / 1e6 / 500;
console.log(`one 12-point Michaelis-Menten fit with its record: page WebAssembly ${wasmPerFit.toFixed(3)} ms, native (500 curves in one process, one thread) ${nativePerFit.toFixed(3)} ms (ratio ${(wasmPerFit / nativePerFit).toFixed(2)})`);
await browser.close();
