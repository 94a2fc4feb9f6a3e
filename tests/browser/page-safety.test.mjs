// Static checks of the built page: no way for text a person pastes (or a
// shared document) to become markup or code. Every user string reaches
// the DOM through textContent; the page never builds HTML from strings or
// evaluates code, and its Content-Security-Policy forbids the network.

import { test } from 'node:test';
import assert from 'node:assert/strict';
import { readFileSync } from 'node:fs';

import { htmlPath } from './harness.mjs';

test('the built page never builds HTML from strings or evaluates code', () => {
  const page = readFileSync(htmlPath, 'utf8');
  for (const forbidden of ['innerHTML', 'outerHTML =', 'insertAdjacentHTML', 'eval(', 'new Function', 'document.write', 'setTimeout("', "setTimeout('"]) {
    const at = page.indexOf(forbidden);
    assert.equal(at, -1, `the page contains ${forbidden}: …${page.slice(Math.max(0, at - 80), at + 80)}…`);
  }
});

test('the page forbids itself the network and any other origin’s code', () => {
  const page = readFileSync(htmlPath, 'utf8');
  const csp = /<meta http-equiv="Content-Security-Policy" content="([^"]*)"/.exec(page)?.[1];
  assert.ok(csp, 'no Content-Security-Policy meta');
  assert.match(csp, /default-src 'none'/);
  assert.match(csp, /connect-src 'none'/);
  assert.match(csp, /form-action 'none'/);
  assert.doesNotMatch(csp, /https?:|\*/, 'no other origin is allowed');
});
