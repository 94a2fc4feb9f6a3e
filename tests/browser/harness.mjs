// Shared set-up of the browser tests: where the built page is, and one
// headless Debian Chromium per test file, launched through playwright-core
// (never a downloaded browser) with a fresh profile, every request that is
// not local refused and counted.

import assert from 'node:assert/strict';
import { mkdirSync, mkdtempSync, rmSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { chromium } from 'playwright-core';

const here = dirname(fileURLToPath(import.meta.url));

/** The built page; `TURNOVER_HTML` overrides. */
export const htmlPath = resolve(process.env.TURNOVER_HTML ?? join(here, '..', '..', 'dist', 'turnover.html'));
/** Its file:// address. */
export const pageUrl = pathToFileURL(htmlPath).href;
/** Where screenshots go; `TURNOVER_SCREENSHOTS` overrides. */
export const shotDir = resolve(process.env.TURNOVER_SCREENSHOTS ?? join(here, '..', '..', 'target', 'screenshots'));
const chromiumPath = process.env.TURNOVER_CHROMIUM ?? '/usr/bin/chromium';

/** Requests the page may make: its own file and in-memory URLs. */
export const isLocal = (url) => /^(file|data|blob|about):/i.test(url);

/** Launches Chromium; `external` collects every refused request.
 *  `freshTabs` (default true): every new tab starts with no analysis kept
 *  in the browser, as on a first visit, so that each test opens the demo;
 *  a reload in the same tab keeps what the page stored. Tests of keeping
 *  work across tabs and restarts pass false. */
export async function launch(name, { acceptDownloads = false, freshTabs = true, profile = null } = {}) {
  assert.ok(existsSync(htmlPath), `page not built: ${htmlPath} does not exist (run build.sh)`);
  mkdirSync(shotDir, { recursive: true });
  // `profile`: a browser profile folder to reuse (a restart of the same
  // browser); it is left in place on close. Otherwise a fresh one.
  const userDataDir = profile ?? mkdtempSync(join(tmpdir(), `turnover-${name}-`));
  const context = await chromium.launchPersistentContext(userDataDir, {
    executablePath: chromiumPath,
    headless: true,
    acceptDownloads,
    viewport: { width: 1280, height: 900 },
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking',
      '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'],
  });
  const external = [];
  await context.route('**/*', (route) => {
    const url = route.request().url();
    if (isLocal(url)) return route.continue();
    external.push(url);
    return route.abort('blockedbyclient');
  });
  if (freshTabs) await context.addInitScript(freshTab);
  for (const p of context.pages()) await p.close();
  return {
    context,
    external,
    async close() {
      await context.close();
      if (!profile) rmSync(userDataDir, { recursive: true, force: true });
    },
  };
}

/** Runs before the page's own scripts in every document of a tab: the
 *  first time in a tab it forgets the analyses kept by earlier tests.
 *  The tab is marked in `window.name`, which a reload keeps. (A mark in
 *  sessionStorage was read back empty after a reload in 2–4 of 25 new
 *  tabs, and this script then wiped what the page had kept.)
 *
 *  The store is cleared when the document has been parsed (readyState
 *  'interactive', which comes before the page's module scripts run and
 *  read it), not at the document's very start. Cleared at the start, the
 *  store came back empty after a later reload of the tab now and then:
 *  in a fresh browser with downloads accepted, 1–4 of 45 reloads in
 *  scripts that recorded every clear (none of them by this script after
 *  the reload), and `further.test.mjs`'s reload test alone failed 5 of
 *  32 runs; with no init script, 0 of 45. Cleared at 'interactive':
 *  0 of 45 and 0 of 26. Why an early write has that effect is not known
 *  (browser or driver); the page itself never writes before its scripts
 *  run. */
export function freshTab() {
  // The tab's first, blank document runs this too; the mark is for the page.
  if (location.protocol === 'about:') return;
  if (window.name === 'turnover-test-tab') return;
  window.name = 'turnover-test-tab';
  const forget = () => {
    try {
      localStorage.clear();
    } catch { /* storage refused: nothing kept to forget */ }
  };
  if (document.readyState === 'loading') document.addEventListener('readystatechange', forget, { once: true });
  else forget();
}

/** A new tab of `context` on the page, with its console errors and page
 *  errors collected in `errors`, once the rate section has left its idle
 *  state (the page has started). */
export async function openWatched(context) {
  const page = await context.newPage();
  const errors = [];
  page.on('console', (msg) => { if (msg.type() === 'error') errors.push(msg.text()); });
  page.on('pageerror', (err) => errors.push(String(err?.stack ?? err)));
  await page.goto(pageUrl, { waitUntil: 'load' });
  await page.waitForFunction(() => document.querySelector('#status')?.dataset.state !== 'idle', null, { timeout: 15_000 });
  return { page, errors };
}
